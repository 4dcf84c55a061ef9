"""Running the command line inside a test."""

from __future__ import annotations

from cohop import cli


def run_cli(capsys, *argv):
    """cli.main(argv) -> (exit code or SystemExit payload, stdout, stderr)."""
    try:
        code = cli.main(list(argv))
    except SystemExit as exc:
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err
