"""The `cohop` command line, in-process through cohop.cli.main and once as a real process."""

from __future__ import annotations

import copy
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from cohop import cli, samples
from tests.cli_helpers import run_cli

POINTER = "/site/systems/0/tx_power_dbm"


@pytest.fixture
def request_file(tmp_path):
    path = tmp_path / "request.json"
    path.write_text(json.dumps(samples.load("water_works")), encoding="utf-8")
    return path


def _ids(name="water_works"):
    return [s["id"] for s in samples.load(name)["site"]["systems"]]


def test_assess_default_sample_prints_table(capsys):
    code, out, err = run_cli(capsys, "assess")
    assert code == 0
    for system_id in _ids():
        assert system_id in out
    assert "cautions" in out
    assert "profile fcc15.247-902-928" in out
    assert "water_works" in err
    assert "Traceback" not in out + err


def test_assess_other_sample(capsys):
    code, out, _ = run_cli(capsys, "assess", "--sample", "open_pit_mine")
    assert code == 0
    assert all(system_id in out for system_id in _ids("open_pit_mine"))


def test_assess_unknown_sample(capsys):
    code, out, err = run_cli(capsys, "assess", "--sample", "no_such_sample")
    assert code not in (0, None)
    assert "no_such_sample" in str(code) + err


def test_assess_file_json(capsys, request_file):
    code, out, _ = run_cli(capsys, "assess", str(request_file), "--json")
    assert code == 0
    body = json.loads(out)
    assert [s["id"] for s in body["systems"]] == _ids()
    assert "cautions" in body and "summary" in body


def test_assess_save_writes_json(capsys, request_file, tmp_path):
    target = tmp_path / "out.json"
    code, out, _ = run_cli(capsys, "assess", str(request_file), "--save", str(target))
    assert code == 0
    saved = json.loads(target.read_text(encoding="utf-8"))
    assert [s["id"] for s in saved["systems"]] == _ids()
    assert str(target) in out
    assert "cautions" in out
    code, out, _ = run_cli(capsys, "assess", str(request_file), "--json")
    assert json.loads(out) == saved


def test_assess_save_to_missing_directory_is_clean(capsys, tmp_path):
    target = tmp_path / "no" / "such" / "dir" / "out.json"
    try:
        code, out, err = run_cli(capsys, "assess", "--save", str(target))
    except OSError as err:
        pytest.fail(f"traceback instead of a message: {err!r}")
    assert code not in (0, None)
    assert str(target) in str(code) + err


def test_assess_monte_carlo(capsys):
    code, out, err = run_cli(capsys, "assess", "--trials", "20000", "--seed", "1")
    assert code == 0
    assert "Monte Carlo check (20000 attempts per system, seed 1" in out
    section = out[out.index("Monte Carlo check"):out.index("cautions:")]
    for system_id in _ids():
        assert f"{system_id}: simulated" in section
    assert "simulating" in err


def test_simulation_from_request_file(capsys, tmp_path):
    body = samples.load("water_works")
    body["simulation"] = {"trials_per_system": 3000, "seed": 4}
    path = tmp_path / "sim.json"
    path.write_text(json.dumps(body), encoding="utf-8")
    code, out, _ = run_cli(capsys, "assess", str(path))
    assert code == 0
    assert "Monte Carlo check (3000 attempts per system, seed 4" in out


def test_assess_invalid_site(capsys, tmp_path):
    body = samples.load("water_works")
    body["site"]["systems"][0]["tx_power_dbm"] = "loud"
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(body), encoding="utf-8")
    code, out, err = run_cli(capsys, "assess", str(path))
    assert code == 1
    assert POINTER in err
    assert "Traceback" not in err
    assert out == ""


def test_missing_file(capsys, tmp_path):
    missing = tmp_path / "missing.json"
    code, out, err = run_cli(capsys, "assess", str(missing))
    assert code not in (0, None)
    message = str(code) + err
    assert str(missing) in message and "cannot read" in message
    assert "Traceback" not in message


def test_non_json_file(capsys, tmp_path):
    path = tmp_path / "notes.txt"
    path.write_text("this is { not json\n", encoding="utf-8")
    code, out, err = run_cli(capsys, "assess", str(path))
    assert code not in (0, None)
    message = str(code) + err
    assert str(path) in message and "not valid JSON" in message


def test_non_utf8_file_is_clean(capsys, tmp_path):
    path = tmp_path / "binary.json"
    path.write_bytes(b"\xff\xfe\x00\x89PNG garbage")
    try:
        code, out, err = run_cli(capsys, "assess", str(path))
    except UnicodeDecodeError as err:
        pytest.fail(f"traceback instead of a message: {err!r}")
    assert code not in (0, None)
    assert str(path) in str(code) + err


def test_json_that_is_not_an_object(capsys, tmp_path):
    path = tmp_path / "list.json"
    path.write_text("[1, 2, 3]", encoding="utf-8")
    code, _, err = run_cli(capsys, "assess", str(path))
    assert code not in (0, None)
    assert "JSON object" in str(code) + err


def test_bare_site_same_as_full_request(capsys, tmp_path, request_file):
    bare = tmp_path / "bare.json"
    bare.write_text(json.dumps(samples.load("water_works")["site"]), encoding="utf-8")
    code_full, out_full, _ = run_cli(capsys, "assess", str(request_file))
    code_bare, out_bare, _ = run_cli(capsys, "assess", str(bare))
    assert code_full == code_bare == 0
    assert out_bare == out_full
    _, out_default, _ = run_cli(capsys, "assess")
    assert out_default == out_full


def test_profiles(capsys):
    code, out, _ = run_cli(capsys, "profiles")
    assert code == 0
    ids = [line.split()[0] for line in out.splitlines() if line and not line.startswith(" ")]
    assert {"fcc15.247-902-928", "erc7003-863-870"} <= set(ids)
    code, out, _ = run_cli(capsys, "profiles", "--json")
    assert code == 0
    listed = json.loads(out)
    assert [p["id"] for p in listed] == ids
    assert all(isinstance(p["rules"], list) for p in listed)


def test_samples(capsys):
    code, out, _ = run_cli(capsys, "samples")
    assert code == 0
    names = [line.split(":")[0] for line in out.splitlines()]
    assert names == ["container_terminal", "open_pit_mine", "water_works", "water_works_replan"]
    assert "re-plan request" in out.splitlines()[3]


def test_server_gives_same_table_as_embedded(capsys, live_server, request_file):
    _, embedded_out, _ = run_cli(capsys, "assess", str(request_file))
    code, served_out, _ = run_cli(capsys, "assess", str(request_file), "--server", live_server)
    assert code == 0
    assert served_out == embedded_out
    _, embedded_profiles, _ = run_cli(capsys, "profiles")
    _, served_profiles, _ = run_cli(capsys, "profiles", "--server", live_server)
    assert served_profiles == embedded_profiles


def test_server_invalid_site_reports_pointer(capsys, live_server, tmp_path):
    site = copy.deepcopy(samples.load("water_works")["site"])
    site["systems"][0]["tx_power_dbm"] = "loud"
    path = tmp_path / "bad_site.json"
    path.write_text(json.dumps(site), encoding="utf-8")
    code, _, err = run_cli(capsys, "assess", str(path), "--server", live_server)
    assert code == 1
    assert POINTER in err


def test_unreachable_server(capsys, free_port):
    code, out, err = run_cli(capsys, "assess", "--server", f"http://127.0.0.1:{free_port}", "--timeout", "5")
    assert code == cli.EXIT_SERVICE == 5  # README, "Exit codes": service or transport error
    assert "could not reach" in err
    assert "Traceback" not in err


def test_token_from_environment(capsys, monkeypatch, stub_server):
    stub = stub_server(lambda *a: (200, "application/json", []))
    monkeypatch.setenv("COHOP_TOKEN", "from-env")
    assert run_cli(capsys, "profiles", "--server", stub.url)[0] == 0
    assert run_cli(capsys, "profiles", "--server", stub.url, "--token", "from-flag")[0] == 0
    assert [r["headers"].get("Authorization") for r in stub.requests] == ["Bearer from-env", "Bearer from-flag"]


def test_module_runs_as_a_process(tmp_path):
    proc = subprocess.run([sys.executable, "-m", "cohop.cli", "assess"], capture_output=True, text=True,
                          timeout=300, cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert all(system_id in proc.stdout for system_id in _ids())
    assert "cautions" in proc.stdout


SCRIPT = Path(sys.executable).parent / ("cohop.exe" if os.name == "nt" else "cohop")


@pytest.mark.skipif(not SCRIPT.exists(), reason="console script not installed next to the interpreter")
def test_console_script(tmp_path):
    proc = subprocess.run([str(SCRIPT), "samples"], capture_output=True, text=True, timeout=120, cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert "water_works" in proc.stdout
