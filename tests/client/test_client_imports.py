"""The client needs only `requests` and the standard library."""

from __future__ import annotations

import ast
import json
import subprocess
import sys
import textwrap
from pathlib import Path

import cohop_client

CLIENT_DIR = Path(cohop_client.__file__).resolve().parent
ALLOWED = {"requests", "cohop_client"}
BLOCKED = ("flask", "flask_smorest", "marshmallow", "numpy", "scipy", "ortools", "werkzeug", "cohop")


def _imported_top_level(path: Path) -> set[str]:
    names = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"), filename=str(path))):
        if isinstance(node, ast.Import):
            names.update(alias.name.split(".")[0] for alias in node.names)
        elif isinstance(node, ast.ImportFrom):
            names.add("cohop_client" if node.level else node.module.split(".")[0])
    return names


def test_client_sources_are_where_expected():
    files = sorted(CLIENT_DIR.glob("**/*.py"))
    assert CLIENT_DIR.name == "cohop_client"
    assert {"__init__.py", "session.py", "errors.py", "results.py"} <= {f.name for f in files}


def test_static_imports_are_stdlib_or_requests():
    offending = {}
    for path in sorted(CLIENT_DIR.glob("**/*.py")):
        bad = {n for n in _imported_top_level(path) if n not in sys.stdlib_module_names and n not in ALLOWED}
        if bad:
            offending[str(path.relative_to(CLIENT_DIR))] = sorted(bad)
    assert offending == {}


def test_static_check_catches_a_service_import(tmp_path):
    probe = tmp_path / "probe.py"
    probe.write_text("import os\nfrom numpy import array\nimport cohop.site\nfrom . import results\n")
    assert _imported_top_level(probe) == {"os", "numpy", "cohop", "cohop_client"}


_SCRIPT = textwrap.dedent(r"""
    import importlib.abc, json, sys

    BLOCKED = tuple(json.loads(sys.argv[3]))

    class Block(importlib.abc.MetaPathFinder):
        def find_spec(self, name, path=None, target=None):
            if name.split(".")[0] in BLOCKED:
                raise ImportError(f"blocked for this test: {name}", name=name)
            return None

    already = sorted(m for m in sys.modules if m.split(".")[0] in BLOCKED)
    assert not already, already
    sys.meta_path.insert(0, Block())

    try:
        import flask
    except ImportError:
        pass
    else:
        raise SystemExit("the import blocker does not work")

    import cohop_client
    from cohop_client import Client, InvalidRequest

    url = sys.argv[1]
    with open(sys.argv[2], encoding="utf-8") as f:
        site = json.load(f)
    with Client(url, timeout_s=60) as api:
        health = api.health()
        assert health.status == "ok", health
        result = api.assess(site)
        assert result.systems and result.cautions
        assert result.system(site["systems"][0]["id"]).id == site["systems"][0]["id"]
        assert [p.id for p in api.profiles()]
        try:
            api.profile("no-such-profile")
        except InvalidRequest as err:
            assert err.status == 404
        else:
            raise SystemExit("expected InvalidRequest")
    leaked = sorted(m for m in sys.modules if m.split(".")[0] in BLOCKED)
    assert not leaked, leaked
    print("OK", result.worst_system)
""")


def test_client_runs_without_the_service_packages(live_server, sample_site, tmp_path):
    site_file = tmp_path / "site.json"
    site_file.write_text(json.dumps(sample_site), encoding="utf-8")
    proc = subprocess.run([sys.executable, "-c", _SCRIPT, live_server, str(site_file), json.dumps(BLOCKED)],
                          capture_output=True, text=True, timeout=120, cwd=tmp_path)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    assert proc.stdout.startswith("OK ")
