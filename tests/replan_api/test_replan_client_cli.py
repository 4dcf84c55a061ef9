"""Re-planning through the Python client (embedded transport) and the `cohop replan` command line,
with charts and CSV surveys."""

from __future__ import annotations

import json
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from cohop import cli, samples
from cohop.api.app import create_app
from cohop.embedded import EMBEDDED_URL, embedded_session
from cohop_client import Assessment, Client, InvalidRequest, NoFeasiblePlan, PlannedSystem, Replan, SystemChange

from .conftest import FAST, by_id, check_replan, replan_request

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_requests"
SURVEY_CSV = SAMPLES / "filter_gallery_survey.csv"
SITE_JSON = SAMPLES / "water_works.json"
PNG = b"\x89PNG\r\n\x1a\n"


@pytest.fixture(scope="module")
def api():
    with Client(EMBEDDED_URL, session=embedded_session(create_app({"TESTING": True}))) as c:
        yield c


def _replan(api, body) -> Replan:
    return api.replan(body["site"], body["current"], mode=body.get("mode"), requirements=body.get("requirements"),
                      search=body.get("search"), detail=body.get("detail"))


@pytest.fixture(scope="module")
def typed_replan(api):
    body = replan_request()
    return body, _replan(api, body)


# --- client ---------------------------------------------------------------------------

def test_client_replan_is_typed_and_matches_raw(typed_replan):
    body, result = typed_replan
    raw = result.raw
    check_replan(body, raw)
    assert isinstance(result, Replan) and isinstance(result.assessment, Assessment)
    assert result.change_count == raw["changes"]["count"]
    assert result.change_lower_bound == raw["changes"]["lower_bound"]
    assert result.proven_minimal is raw["changes"]["proven_minimal"]
    assert result.objective == raw["objective"] and result.fresh_objective == raw["fresh"]["objective"]
    assert result.cautions == tuple(raw["cautions"])
    assert all(isinstance(c, SystemChange) for c in result.changes)
    assert [(c.id, c.status, list(c.dropped), list(c.added), c.sequence_changed) for c in result.changes] == \
        [(d["id"], d["status"], d["dropped"], d["added"], d["sequence_changed"]) for d in raw["diff"]]
    assert all(isinstance(p, PlannedSystem) for p in result.systems)
    assert [(p.id, list(p.hop_set)) for p in result.systems] == [(p["id"], p["hop_set"]) for p in raw["plan"]]
    assert result.change_count == sum(len(c.added) for c in result.changes if c.status != "new system")
    for p in result.systems:
        assert result.assessment.system(p.id).hop_set == p.hop_set
    assert result.assessment.raw == raw["assessment"]


def test_client_budget_below_the_bound_raises(api, typed_replan):
    lower = typed_replan[1].change_lower_bound
    body = replan_request(mode={"kind": "budget", "max_changes": lower - 1})
    with pytest.raises(NoFeasiblePlan) as info:
        _replan(api, body)
    assert info.value.proven
    budget = [c for c in info.value.conflicts if c.requirement == "change budget"]
    assert budget and str(lower) in budget[0].relax


def test_client_invalid_current_plan_raises(api):
    body = replan_request()
    body["current"]["systems"][1]["system"] = body["current"]["systems"][0]["system"]
    with pytest.raises(InvalidRequest) as info:
        _replan(api, body)
    assert "/current/systems/1/system" in [e.pointer for e in info.value.field_errors]


# --- command line ---------------------------------------------------------------------------

@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """A fresh plan of the unchanged site saved by `cohop plan --save`, and the changed site."""
    d = tmp_path_factory.mktemp("replan_cli")
    site = dict(samples.load("water_works"), search=dict(FAST))
    (d / "site.json").write_text(json.dumps(site), encoding="utf-8")
    changed = samples.load("water_works_replan")
    for key in ("current", "mode"):
        changed.pop(key)
    changed["search"] = dict(FAST)
    (d / "changed.json").write_text(json.dumps(changed), encoding="utf-8")
    assert cli.main(["plan", str(d / "site.json"), "--save", str(d / "plan.json")]) == 0
    return d


def test_cli_replan_without_arguments_uses_the_sample(capsys):
    assert cli.main(["replan"]) == 0
    out, err = capsys.readouterr()
    assert "re-plan:" in out and "changes:" in out and "cautions" in out
    assert "water_works_replan" in err
    assert "Traceback" not in out + err


def test_cli_replan_from_a_saved_plan(files, capsys):
    capsys.readouterr()
    args = ["replan", str(files / "changed.json"), "--current", str(files / "plan.json"), "--json",
            "--save", str(files / "replan.json"), "--chart", str(files / "out.png")]
    assert cli.main(args) == 0
    out, err = capsys.readouterr()
    answer = json.loads(out)
    assert json.loads((files / "replan.json").read_text(encoding="utf-8")) == answer
    saved = json.loads((files / "plan.json").read_text(encoding="utf-8"))
    current = {"systems": [{"system": s["id"], "hop_set": sorted(s["channels"]), "sequence": s["channels"]}
                           for s in saved["sequences"]["systems"]]}
    body = json.loads((files / "changed.json").read_text(encoding="utf-8"))
    check_replan(dict(body, current=current), answer)
    assert answer["changes"]["count"] > 0  # the new gateway takes channels the fresh plan used
    assert (files / "out.png").read_bytes().startswith(PNG)
    assert "chart written to" in err


def test_cli_replan_chart_svg_from_a_current_file(files, capsys):
    saved = json.loads((files / "plan.json").read_text(encoding="utf-8"))
    current = {"systems": [{"system": p["id"], "hop_set": p["hop_set"]} for p in saved["plan"]]}
    (files / "current.json").write_text(json.dumps(current), encoding="utf-8")
    svg = files / "out.svg"
    assert cli.main(["replan", str(files / "changed.json"), "--current", str(files / "current.json"),
                     "--chart", str(svg)]) == 0
    out, _ = capsys.readouterr()
    assert "re-plan:" in out and "changes:" in out
    root = ET.parse(svg).getroot()
    assert root.tag.endswith("svg")


def test_cli_replan_budget_below_the_bound_exits_3(capsys):
    assert cli.main(["replan", "--max-changes", "0", "--time-limit", "0.5"]) == 3
    _, err = capsys.readouterr()
    assert "conflicting requirements" in err and "max_changes 0" in err
    assert "Traceback" not in err


def test_cli_replan_rejects_a_file_that_is_not_a_plan(files, capsys):
    (files / "junk.json").write_text(json.dumps({"hello": "world"}), encoding="utf-8")
    assert cli.main(["replan", str(files / "changed.json"), "--current", str(files / "junk.json")]) == cli.EXIT_USAGE
    assert "junk.json: holds no plan" in capsys.readouterr().err


def test_cli_chart_from_saved_files(files, capsys):
    out = files / "chart.png"
    assert cli.main(["chart", str(files / "site.json"), str(files / "plan.json"), "--out", str(out)]) == 0
    assert out.read_bytes().startswith(PNG)
    assert "chart written to" in capsys.readouterr().err


# --- surveys from CSV -------------------------------------------------------------------------

def test_cli_assess_with_a_survey_csv_adds_derived_interferers(capsys):
    assert cli.main(["assess", str(SITE_JSON), "--json"]) == 0
    plain = json.loads(capsys.readouterr().out)
    assert plain["derived_interferers"] == []
    assert cli.main(["assess", str(SITE_JSON), "--survey", str(SURVEY_CSV), "--json"]) == 0
    surveyed = json.loads(capsys.readouterr().out)
    derived = surveyed["derived_interferers"]
    assert derived and all(d["id"].startswith("survey/gallery-2026-11/") for d in derived)
    applies = {"filter-sensors", "pump-telemetry", "sludge-crane"}
    assert {d["system"] for d in derived} <= applies
    systems = by_id(surveyed["systems"])
    assert any(src["id"].startswith("survey/") for sid in applies for src in systems[sid]["sources"])


def _bad_survey(tmp_path) -> Path:
    lines = SURVEY_CSV.read_text(encoding="utf-8").splitlines()
    i = next(k for k, line in enumerate(lines) if line and line[0].isdigit())
    freq = lines[i].split(",")[0]
    lines[i] = f"{freq},loud,0.010"
    bad = tmp_path / "bad_survey.csv"
    bad.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return bad


def test_cli_malformed_survey_exits_with_a_clear_message(tmp_path, capsys):
    bad = _bad_survey(tmp_path)
    assert cli.main(["assess", str(SITE_JSON), "--survey", str(bad)]) == cli.EXIT_USAGE
    message = capsys.readouterr().err
    assert "bad_survey.csv" in message and "level_dbm" in message and "'loud'" in message
    assert "not a number" in message
    proc = subprocess.run([sys.executable, "-m", "cohop", "assess", str(SITE_JSON), "--survey", str(bad)],
                          capture_output=True, text=True, timeout=60, cwd=ROOT)
    assert proc.returncode != 0
    assert "Traceback" not in proc.stderr and "not a number" in proc.stderr


def test_cli_survey_without_a_level_column_is_rejected(tmp_path, capsys):
    bad = tmp_path / "no_levels.csv"
    bad.write_text("frequency_hz,occupancy_fraction\n902000000,0.1\n", encoding="utf-8")
    assert cli.main(["assess", str(SITE_JSON), "--survey", str(bad)]) == cli.EXIT_USAGE
    assert "level_dbm" in capsys.readouterr().err
