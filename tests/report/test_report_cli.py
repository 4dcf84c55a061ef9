"""`--report FILE.html` on the command line: the file is the report of the answer the command printed."""

import json

from tests.cli_helpers import run_cli


def test_assess_writes_a_report_with_per_channel_shading(capsys, tmp_path):
    path = tmp_path / "r.html"
    code, out, err = run_cli(capsys, "assess", "--sample", "container_terminal", "--json", "--report",
                             str(path))
    assert code == 0 and f"report written to {path}" in err
    answer = json.loads(out)
    assert answer["systems"][0]["channels"]  # a report asks for per-channel figures when no --detail is given
    document = path.read_text(encoding="utf-8")
    assert document.startswith("<!DOCTYPE html>") and "Assessment report" in document
    assert document.count("data:image/png;base64,") == 4  # channels, dominant sources, site map, traffic


def test_replan_writes_a_report(capsys, tmp_path):
    path = tmp_path / "r.html"
    code, _, err = run_cli(capsys, "replan", "--sample", "water_works_replan", "--time-limit", "1", "--report",
                           str(path))
    assert code == 0, err
    assert "Re-plan report" in path.read_text(encoding="utf-8")


def test_an_unwritable_report_path_is_a_message_not_a_traceback(capsys, tmp_path):
    code, _, err = run_cli(capsys, "assess", "--report", str(tmp_path / "missing" / "r.html"))
    assert code not in (0, None) and "could not write" in str(code) + err


def test_chart_dominant_draws_the_source_strip(capsys, tmp_path):
    path = tmp_path / "map.svg"
    code, _, err = run_cli(capsys, "assess", "--sample", "container_terminal", "--chart", str(path),
                           "--dominant")
    assert code == 0, err
    svg = path.read_text(encoding="utf-8")
    assert 'id="dominant:sts-1"' in svg and 'id="row:sts-1"' in svg


def test_site_map_option_writes_the_map(capsys, tmp_path):
    path = tmp_path / "site.svg"
    code, _, err = run_cli(capsys, "assess", "--sample", "open_pit_mine", "--site-map", str(path))
    assert code == 0 and f"site map written to {path}" in err
    svg = path.read_text(encoding="utf-8")
    assert 'id="system:haul-fleet"' in svg and 'id="pair:' in svg
