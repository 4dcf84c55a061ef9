"""Planning through the Python client (embedded transport) and the `cohop plan` command line."""

from __future__ import annotations

import json

import pytest

from cohop import samples
from tests.cli_helpers import run_cli
from cohop.api.app import create_app
from cohop.embedded import EMBEDDED_URL, embedded_session
from cohop_client import (Assessment, Client, CohopError, Conflict, InvalidRequest, NoFeasiblePlan, Plan,
                          PlannedSystem, SolverReport)

from .conftest import BASELINE_NAMES, IDS, INFEASIBLE, SIZES, assert_repeats, plan_ok, requirement, small_request


@pytest.fixture(scope="module")
def api():
    with Client(EMBEDDED_URL, session=embedded_session(create_app({"TESTING": True}))) as c:
        yield c


def _plan(api, body) -> Plan:
    return api.plan(body["site"], requirements=body.get("requirements"), search=body.get("search"),
                    baselines=body.get("baselines"), detail=body.get("detail"))


def _infeasible_body() -> dict:
    body = small_request()
    requirement(body, "a").update(min_channels=40, max_channels=40)
    return body


@pytest.fixture(scope="module")
def typed_plan(api):
    body = small_request(baselines=["all"])
    return body, _plan(api, body)


# --- client ---------------------------------------------------------------------

def test_client_plan_is_typed(typed_plan):
    _, plan = typed_plan
    raw = plan.raw
    assert isinstance(plan, Plan) and isinstance(plan.solver, SolverReport)
    assert isinstance(plan.assessment, Assessment)
    assert all(isinstance(p, PlannedSystem) for p in plan.systems)
    assert [p.id for p in plan.systems] == list(IDS) == [p["id"] for p in raw["plan"]]
    for p, rp in zip(plan.systems, raw["plan"]):
        assert plan.hop_set(p.id) == p.hop_set == tuple(rp["hop_set"])
        assert p.centres_hz == tuple(rp["centres_hz"])
        assert len(p.hop_set) == SIZES[p.id]
        assert plan.assessment.system(p.id).hop_set == p.hop_set
    with pytest.raises(KeyError):
        plan.hop_set("no-such-system")


def test_client_solver_and_assessment_match_raw(typed_plan):
    _, plan = typed_plan
    raw = plan.raw
    for name in ("status", "objective", "bound", "gap", "time_s", "method", "evaluated_objective", "time_limit_s",
                 "requested_time_limit_s", "stopped_by_wall_clock"):
        assert getattr(plan.solver, name) == raw["solver"][name], name
    assert plan.solver.binding == tuple(raw["solver"]["binding"])
    assert plan.solver.notes == tuple(raw["solver"]["notes"])
    assert plan.assessment.raw == raw["assessment"]
    assert plan.assessment.weighted_collision_probability == \
        raw["assessment"]["summary"]["weighted_collision_probability"]
    for s in plan.assessment.systems:
        assert s.collision_probability == next(r["per_hop"]["collision_probability"]
                                               for r in raw["assessment"]["systems"] if r["id"] == s.id)
    assert [b.name for b in plan.baselines] == list(BASELINE_NAMES)
    assert [b.objective for b in plan.baselines] == [b["objective"] for b in raw["baselines"]]
    assert plan.ratio_to_best_baseline == raw["comparison"]["ratio"]
    assert plan.cautions == tuple(raw["cautions"])


def test_client_answer_equals_the_http_answer(typed_plan):
    """The embedded transport changes nothing: same request, same answer as the test client's."""
    body, plan = typed_plan
    direct = plan_ok(create_app({"TESTING": True}).test_client(), body)
    assert_repeats(plan.raw, direct)


def test_client_no_feasible_plan(api):
    with pytest.raises(NoFeasiblePlan) as info:
        _plan(api, _infeasible_body())
    err = info.value
    assert isinstance(err, CohopError) and not isinstance(err, InvalidRequest)
    assert err.status == 422 and err.problem["type"] == INFEASIBLE
    assert err.proven is True
    assert err.conflicts and all(isinstance(c, Conflict) for c in err.conflicts)
    count = next(c for c in err.conflicts if c.requirement == "channel count")
    assert count.systems == ("a",) and isinstance(count.channels, tuple) and count.relax
    assert count.detail in str(err)


def test_client_invalid_plan_request(api):
    body = small_request()
    requirement(body, "a")["system"] = "nope"
    with pytest.raises(InvalidRequest) as info:
        _plan(api, body)
    assert not isinstance(info.value, NoFeasiblePlan)
    assert "/requirements/systems/0/system" in [f.pointer for f in info.value.field_errors]


# --- command line -----------------------------------------------------------------

@pytest.fixture
def request_file(tmp_path):
    path = tmp_path / "plan.json"
    path.write_text(json.dumps(small_request()), encoding="utf-8")
    return path


def test_cli_plan_table_with_comparison(capsys, request_file):
    code, out, err = run_cli(capsys, "plan", str(request_file), "--time-limit", "1", "--compare")
    assert code == 0, err
    for sid in IDS:
        assert sid in out
    for words in ("proven bound", "plan / best baseline", "cautions", "hop sets", *BASELINE_NAMES):
        assert words in out, words
    assert "planning estimate" in out.lower() and "site survey" in out.lower()
    progress = [line for line in err.splitlines() if "best" in line and "bound" in line]
    assert progress, err
    assert "proven bound" not in err and "Traceback" not in out + err


def test_cli_plan_json_and_options(capsys, request_file, tmp_path):
    saved = tmp_path / "answer.json"
    code, out, err = run_cli(capsys, "plan", str(request_file), "--time-limit", "1", "--json", "--save", str(saved),
                         "--objective", "worst_system", "--coordination", "independent", "--seed", "3",
                         "--workers", "1")
    assert code == 0, err
    answer = json.loads(out)
    assert [p["id"] for p in answer["plan"]] == list(IDS)
    assert [p["channel_count"] for p in answer["plan"]] == list(SIZES.values())
    assert answer["solver"]["objective_kind"] == "worst_system" and answer["coordination"] == "independent"
    assert answer["solver"]["workers"] == 1 and answer["solver"]["time_limit_s"] == 1.0
    assert answer["baselines"] == []
    assert json.loads(saved.read_text(encoding="utf-8")) == answer


def test_cli_plan_save_with_table(capsys, request_file, tmp_path):
    saved = tmp_path / "answer.json"
    code, out, err = run_cli(capsys, "plan", str(request_file), "--time-limit", "1", "--save", str(saved))
    assert code == 0, err
    assert "proven bound" in out and f"full answer written to {saved}" in out
    answer = json.loads(saved.read_text(encoding="utf-8"))
    assert {"plan", "solver", "assessment", "cautions"} <= set(answer)
    assert all(p["id"] in out for p in answer["plan"])


def test_cli_bare_site_file(capsys, tmp_path):
    """A bare site (no request wrapper) plans with the profile's defaults."""
    path = tmp_path / "site.json"
    path.write_text(json.dumps(small_request()["site"]), encoding="utf-8")
    code, out, err = run_cli(capsys, "plan", str(path), "--time-limit", "1", "--json")
    assert code == 0, err
    assert [p["id"] for p in json.loads(out)["plan"]] == list(IDS)


def test_cli_plan_infeasible_exit_code(capsys, tmp_path):
    path = tmp_path / "impossible.json"
    path.write_text(json.dumps(_infeasible_body()), encoding="utf-8")
    code, out, err = run_cli(capsys, "plan", str(path), "--time-limit", "1")
    assert code == 3
    assert "conflicting requirements" in err and "no plan meets the requirements" in err
    assert "a needs 40 channels" in err and "relax:" in err
    assert out == "" and "Traceback" not in err


def test_cli_plan_invalid_request(capsys, tmp_path):
    body = small_request()
    requirement(body, "a")["pinned_channels"] = [99]
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(body), encoding="utf-8")
    code, _, err = run_cli(capsys, "plan", str(path), "--time-limit", "1")
    assert code == 1
    assert "/requirements/systems/0/pinned_channels/0" in err


def test_cli_plan_default_sample(capsys):
    code, out, err = run_cli(capsys, "plan", "--time-limit", "1")
    assert code == 0, err
    assert "water_works" in err
    for s in samples.load("water_works")["site"]["systems"]:
        assert s["id"] in out
    assert "15.247(h)" in out and "proven bound" in out
