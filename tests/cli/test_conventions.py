"""Command-line conventions: '-' for standard input and output, --version, exit codes, JSON errors,
help on every option, lazy imports, and the text tables' wording (README, "Command line")."""

from __future__ import annotations

import io
import json
import socket
import subprocess
import sys

import pytest

import cohop
from cohop import cli, cli_text, samples
from cohop.api import create_app
from cohop.workflow import profiles_json
from tests.cli_helpers import run_cli

WATER = samples.load("water_works")


def _stdin(monkeypatch, text: str) -> None:
    monkeypatch.setattr(sys, "stdin", io.StringIO(text))


def test_site_from_standard_input_equals_the_file(capsys, monkeypatch, tmp_path):
    path = tmp_path / "site.json"
    path.write_text(json.dumps(WATER), encoding="utf-8")
    code, from_file, _ = run_cli(capsys, "assess", str(path))
    _stdin(monkeypatch, json.dumps(WATER))
    code_stdin, from_stdin, err = run_cli(capsys, "assess", "-")
    assert code == code_stdin == cli.EXIT_OK
    assert from_stdin == from_file
    assert "embedded sample" not in err


def test_save_to_standard_output_is_the_json_answer(capsys):
    code, out, _ = run_cli(capsys, "assess", "--save", "-", "--json")
    assert code == 0
    first, second = out.split("\n}\n", 1)  # the printed answer, then the saved copy
    assert json.loads(first + "}") == json.loads(second)


def test_bad_json_on_standard_input_is_a_usage_error(capsys, monkeypatch):
    _stdin(monkeypatch, "{not json")
    code, out, err = run_cli(capsys, "assess", "-")
    assert code == cli.EXIT_USAGE
    assert "standard input is not valid JSON" in err and out == ""


def test_version(capsys):
    code, out, _ = run_cli(capsys, "--version")
    assert code == 0 and out.strip() == f"cohop {cohop.__version__}"


def test_usage_error_exits_2(capsys):
    code, out, err = run_cli(capsys, "plan", "--objective", "cheapest")
    assert code == cli.EXIT_USAGE
    assert "invalid choice" in err and "usage:" in err and out == ""
    code, out, _ = run_cli(capsys, "plan", "--objective", "cheapest", "--json")
    assert code == cli.EXIT_USAGE
    problem = json.loads(out)
    assert problem["type"] == cli.PROBLEM_BASE + "usage" and "invalid choice" in problem["detail"]


def test_rejected_request_with_json_gives_problem_details_on_stdout(capsys, monkeypatch):
    bad = json.loads(json.dumps(WATER))
    bad["site"]["systems"][0]["tx_power_dbm"] = "loud"
    _stdin(monkeypatch, json.dumps(bad))
    code, out, err = run_cli(capsys, "assess", "-", "--json")
    assert code == cli.EXIT_REJECTED
    problem = json.loads(out)
    assert problem["exit_code"] == 1 and problem["status"] == 422
    assert "/site/systems/0/tx_power_dbm" in [e["pointer"] for e in problem["errors"]]
    assert "/site/systems/0/tx_power_dbm" in err  # the human message stays on stderr


def test_usage_failure_with_json_gives_problem_details(capsys, tmp_path):
    code, out, _ = run_cli(capsys, "assess", str(tmp_path / "missing.json"), "--json")
    assert code == cli.EXIT_USAGE
    problem = json.loads(out)
    assert problem["type"] == cli.PROBLEM_BASE + "usage" and "missing.json" in problem["detail"]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_unreachable_server_is_a_service_error_in_json(capsys):
    free_port = _free_port()
    code, out, _ = run_cli(capsys, "profiles", "--server", f"http://127.0.0.1:{free_port}", "--timeout", "2",
                           "--json")
    assert code == cli.EXIT_SERVICE
    assert json.loads(out)["type"] == cli.PROBLEM_BASE + "service-error"


def test_fail_on_compliance_exit_code(capsys, tmp_path):
    """A hop set of 10 channels on the 902-928 MHz profile fails 47 CFR 15.247(a)(1)(i)'s 50-channel minimum."""
    body = json.loads(json.dumps(WATER))
    body["site"]["systems"][0]["hop_set"] = list(range(10))
    path = tmp_path / "few.json"
    path.write_text(json.dumps(body), encoding="utf-8")
    assert run_cli(capsys, "assess", str(path))[0] == cli.EXIT_OK
    code, _, err = run_cli(capsys, "assess", str(path), "--fail-on-compliance")
    assert code == cli.EXIT_COMPLIANCE
    assert body["site"]["systems"][0]["id"] in err
    assert run_cli(capsys, "assess", "--fail-on-compliance")[0] == cli.EXIT_OK  # the sample passes or warns


def _options(parser):
    for action in parser._actions:
        if action.choices and isinstance(action.choices, dict):  # subcommands
            for name, sub in action.choices.items():
                yield from ((f"{name} {a.option_strings or a.dest}", a) for a in sub._actions)


def test_every_option_has_help():
    missing = [name for name, a in _options(cli.build_parser()) if not a.help]
    assert missing == []


def test_epilog_lists_every_exit_code():
    epilog = cli.build_parser().epilog
    for code in range(7):
        assert f"{code} " in epilog


def test_profiles_without_the_app_equal_the_service_answer():
    served = create_app({"TESTING": True}).test_client().get("/v1/profiles").get_json()
    assert json.loads(json.dumps(profiles_json())) == served


@pytest.mark.parametrize("argv", [["profiles"], ["samples"], ["--version"]])
def test_static_commands_import_no_solver_stack(argv):
    code = ("import sys\nfrom cohop import cli\ntry:\n    cli.main(%r)\nexcept SystemExit:\n    pass\n"
            "heavy = sorted(m for m in ('ortools', 'flask', 'marshmallow', 'scipy', 'cohop.api', 'cohop.planning', "
            "'requests') if m in sys.modules)\nprint('HEAVY', heavy)" % argv)
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert "HEAVY []" in proc.stdout


def test_percentages_never_in_scientific_notation():
    for p in (0.0, 1e-15, 3e-9, 5.79e-8, 1e-5, 0.00123, 0.0153, 0.316, 1.0):
        text = cli_text._pct(p)
        assert "e" not in text.lower() and text.endswith("%")
    assert cli_text._pct(5.79e-8) == "0.0000058%"  # two significant digits below 1 %
    assert cli_text._pct(0.316) == "31.60%"


def test_simulated_zero_shows_its_interval():
    assert cli_text._pct_interval(0.0, [0.0, 0.000768]) == "0% [0%, 0.077%]"


def test_every_solving_command_takes_a_seed():
    parser = cli.build_parser()
    for command in ("plan", "replan"):
        assert parser.parse_args([command, "--seed", "3"]).seed == 3


def test_elapsed_time_progress_line():
    stream = io.StringIO()  # not a terminal: one line per tick
    line = cli_text.ProgressLine(stream)
    line.tick("re-planning", 2.04, 10.0)
    line.tick("re-planning", 3.0, None)
    line.finish()
    assert stream.getvalue().splitlines() == ["   2.0 s of at most 10 s  (re-planning)", "   3.0 s  (re-planning)"]


def test_misshapen_documents_are_usage_errors(capsys, tmp_path):
    site = tmp_path / "site.json"
    site.write_text(json.dumps(WATER), encoding="utf-8")
    broken = tmp_path / "broken.json"
    broken.write_text(json.dumps({"plan": [{"hop_set": [1]}]}), encoding="utf-8")  # no id
    for argv in (["apply", str(site), str(broken), "-o", str(tmp_path / "out.json")],
                 ["diff", str(site), str(broken)]):
        code, out, err = run_cli(capsys, *argv)
        assert code == cli.EXIT_USAGE, argv
        assert "expected shape" in err and "Traceback" not in err


def test_a_reader_that_stops_early_ends_the_command_quietly(monkeypatch):
    """`cohop profiles | head -1`: standard output is a pipe whose reader has gone (here closed before the first
    write, so every write fails with EPIPE whatever the timing): the command ends with exit 0, no traceback."""
    import os

    read_end, write_end = os.pipe()
    os.close(read_end)
    out = io.TextIOWrapper(io.FileIO(write_end, "w"), write_through=True)
    monkeypatch.setattr(sys, "stdout", out)
    try:
        code = cli.main(["profiles"])
    finally:
        monkeypatch.undo()
        out.close()
    assert code == cli.EXIT_OK


@pytest.mark.parametrize("policy", ["worst", "mean"])
def test_the_table_names_where_a_moving_system_is_worst_off(capsys, tmp_path, policy):
    """The container terminal's quay crane moves over five positions: the text table says the policy, where the
    crane is worst off and its figures there (and the mean under the mean policy), as the JSON answer does."""
    body = samples.load("container_terminal")
    body["site"]["mobility_policy"] = policy
    path = tmp_path / "site.json"
    path.write_text(json.dumps(body), encoding="utf-8")
    code, text, _ = run_cli(capsys, "assess", str(path))
    _, raw, _ = run_cli(capsys, "assess", str(path), "--json")
    assert code == 0
    crane = next(s for s in json.loads(raw)["systems"] if s["id"] == "sts-1")["mobility"]
    block = text[text.index("moving systems (policy " + policy):]
    line = " ".join(block.split("\n\n")[0].split())
    w = crane["worst_position"]
    assert f"sts-1: {crane['positions_sampled']} positions; worst at x {w['position']['x_m']:g} m" in line
    assert f"hit/hop {cli_text._pct(w['collision_probability'])}" in line
    assert ("mean over positions" in line) == (policy == "mean")
