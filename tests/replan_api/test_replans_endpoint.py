"""POST /v1/replans: fewest channel changes after the site changed, or the best plan within a budget."""

from __future__ import annotations

import pytest
from openapi_schema_validator import OAS30Validator

from cohop.api.schemas.replan import ReplanResponseSchema
from tests.answer_keys import missing_keys
from tests.problems import PROBLEM_JSON

from .conftest import (INFEASIBLE, INVALID, PLANS, REPLANS, by_id, by_system, check_replan, current_from_plan,
                       ok, pointers, post, problem, replan_request, site_request, small_request)


def _validator(spec, name):
    return OAS30Validator({"$ref": f"#/components/schemas/{name}", "components": spec["components"]})


# --- the re-plan sample ----------------------------------------------------------------

def test_sample_replan_is_consistent(sample_replan, spec):
    body, answer = sample_replan
    check_replan(body, answer)
    assert answer["mode"] == {"kind": "tolerance", "tolerance": 0.05, "max_changes": None}
    assert not list(_validator(spec, "ReplanResponse").iter_errors(answer))
    assert missing_keys(ReplanResponseSchema(), answer) == []


def test_sample_replan_change_count_and_bound(sample_replan):
    body, answer = sample_replan
    ch = answer["changes"]
    assert ch["removed_systems"] == []
    # the sample is small enough that the change count is always proven minimal within its search budget
    assert ch["proven_minimal"] and ch["count"] == ch["lower_bound"]
    # the new gateway excludes current channels: something must change, yet not everything
    assert ch["lower_bound"] > 0
    statuses = {d["status"] for d in answer["diff"]}
    assert statuses <= {"kept", "changed"} and "changed" in statuses
    # a proven minimum cannot change more than starting afresh would (the fresh plan meets the target)
    current = by_system(body["current"]["systems"])
    fresh_changes = sum(len(set(p["hop_set"]) - set(current[p["id"]]["hop_set"])) for p in answer["fresh"]["plan"])
    assert ch["count"] <= fresh_changes


def test_sample_replan_keeps_unchanged_sequences(sample_replan):
    body, answer = sample_replan
    current = by_system(body["current"]["systems"])
    seqs = by_id(answer["sequences"]["systems"])
    kept = [d for d in answer["diff"] if d["status"] == "kept"]
    assert kept, "the sample keeps at least one system as it is"
    for d in kept:
        assert not d["sequence_changed"] and d["dropped"] == d["added"] == []
        assert seqs[d["id"]]["construction"] == "kept"
        assert seqs[d["id"]]["channels"] == current[d["id"]]["sequence"]


def test_sample_replan_assessment_uses_the_survey(sample_replan):
    body, answer = sample_replan
    derived = answer["assessment"]["derived_interferers"]
    assert derived
    survey_ids = {s["id"] for s in body["site"]["surveys"]}
    for d in derived:
        assert d["id"].startswith("survey/"), d["id"]
        assert d["survey"] in survey_ids and d["system"] in body["site"]["surveys"][0]["applies_to"]
    assert any("site survey" in c for c in answer["cautions"])


# --- an unchanged site --------------------------------------------------------------------

def _unchanged_site_replan(client, requirements=None):
    extra = {"requirements": requirements} if requirements else {}
    body = site_request(**extra)
    fresh = ok(post(client, PLANS, body))
    replan = dict(body, current=current_from_plan(fresh))
    return replan, ok(post(client, REPLANS, replan))


def test_current_plan_equal_to_a_fresh_plan_changes_nothing(client, fresh_plan):
    body, fresh = fresh_plan
    replan = dict(body, current=current_from_plan(fresh))
    answer = ok(post(client, REPLANS, replan))
    check_replan(replan, answer)
    assert answer["changes"]["count"] == 0 == answer["changes"]["lower_bound"]
    assert answer["changes"]["proven_minimal"] is True
    assert all(d["status"] == "kept" and not d["sequence_changed"] for d in answer["diff"])
    assert [p["hop_set"] for p in answer["plan"]] == [p["hop_set"] for p in fresh["plan"]]
    assert all(s["construction"] == "kept" for s in answer["sequences"]["systems"])


def test_independent_coordination_unchanged_site_changes_nothing(client):
    replan, answer = _unchanged_site_replan(client, {"coordination": "independent"})
    assert answer["changes"]["count"] == 0, answer["changes"]
    assert all(d["status"] == "kept" for d in answer["diff"])
    assert not any("tolerance was not reached" in n for n in answer["notes"])


# --- budget mode --------------------------------------------------------------------------

def test_budget_below_the_lower_bound_is_infeasible(client, sample_replan, spec):
    lower = sample_replan[1]["changes"]["lower_bound"]
    body = replan_request(mode={"kind": "budget", "max_changes": lower - 1})
    prob = problem(post(client, REPLANS, body), 422, INFEASIBLE)
    conflicts = [c for c in prob["conflicts"] if c["requirement"] == "change budget"]
    assert conflicts, prob
    assert str(lower) in conflicts[0]["relax"] and conflicts[0]["detail"] in prob["detail"]
    assert not list(_validator(spec, "InfeasibleProblem").iter_errors(prob))


@pytest.mark.parametrize("extra", [0, 10])
def test_budget_at_or_above_the_lower_bound(client, sample_replan, extra):
    lower = sample_replan[1]["changes"]["lower_bound"]
    body = replan_request(mode={"kind": "budget", "max_changes": lower + extra})
    answer = ok(post(client, REPLANS, body))
    check_replan(body, answer)
    assert answer["mode"]["kind"] == "budget" and answer["mode"]["max_changes"] == lower + extra
    assert lower <= answer["changes"]["count"] <= lower + extra
    assert answer["target_objective"] is None


def test_budget_is_never_exceeded_when_guards_force_changes(client):
    current = {"systems": [{"system": "a", "hop_set": [0, 1, 2, 3]}, {"system": "b", "hop_set": [0, 1, 2, 3]},
                           {"system": "c", "hop_set": [12, 13, 14]}, {"system": "d", "hop_set": [20, 21, 22]}]}
    body = small_request(current=current, mode={"kind": "budget", "max_changes": 0})
    body["requirements"]["guard_excess_db"] = 0.0  # a and b may no longer share channels
    resp = post(client, REPLANS, body)
    if resp.status_code == 200:
        assert resp.get_json()["changes"]["count"] <= 0, resp.get_json()["changes"]
    else:  # proven impossible, or not found within the budget: either way a 422 naming the budget
        assert resp.status_code == 422
        assert "change budget" in [c["requirement"] for c in resp.get_json()["conflicts"]]


# --- systems added and removed ----------------------------------------------------------

def test_removed_and_new_systems(client):
    body = replan_request()
    gone = next(c for c in body["current"]["systems"] if c["system"] == "pump-telemetry")
    gone["system"] = "old-radio"  # pump-telemetry is missing from the current plan, old-radio left the site
    answer = ok(post(client, REPLANS, body))
    check_replan(body, answer)
    assert answer["changes"]["removed_systems"] == ["old-radio"]
    diff = by_id(answer["diff"])
    assert "old-radio" not in diff
    new = diff["pump-telemetry"]
    assert new["status"] == "new system" and new["before"] is None and new["sequence_changed"]
    assert new["added"] == by_id(answer["plan"])["pump-telemetry"]["hop_set"]
    assert answer["changes"]["count"] == sum(len(d["added"]) for d in answer["diff"] if d["status"] != "new system")


# --- validation ---------------------------------------------------------------------------

def _first(body):
    return body["current"]["systems"][0]


def _repeat(body):
    _first(body)["hop_set"][1] = _first(body)["hop_set"][0]


def _foreign_sequence(body):
    s = _first(body)
    s["sequence"][0] = next(c for c in range(129) if c not in s["hop_set"])


def _budget_without_max(body):
    body["mode"] = {"kind": "budget"}


def _off_grid(body):
    s = _first(body)
    s.pop("sequence")
    s["hop_set"][0] = body["site"]["grid"]["count"]


def _duplicate_id(body):
    body["current"]["systems"][1]["system"] = _first(body)["system"]


def _no_current(body):
    body.pop("current")


def _unknown_mode(body):
    body["mode"] = {"kind": "cheapest"}


@pytest.mark.parametrize("mutate, pointer, words", [
    (_repeat, "/current/systems/0/hop_set", "repeat"),
    (_foreign_sequence, "/current/systems/0/sequence", "hop_set"),
    (_budget_without_max, "/mode/max_changes", "max_changes"),
    (_off_grid, "/current/systems/0/hop_set/0", "off the grid"),
    (_duplicate_id, "/current/systems/1/system", "listed twice"),
    (_no_current, "/current", "Missing"),
    (_unknown_mode, "/mode/kind", "tolerance"),
], ids=lambda v: getattr(v, "__name__", None) if callable(v) else None)
def test_invalid_requests_point_at_the_field(client, mutate, pointer, words):
    body = replan_request()
    mutate(body)
    prob = problem(post(client, REPLANS, body), 422, INVALID)
    found = pointers(prob)
    assert pointer in found, found
    assert words in found[pointer]


# --- OpenAPI ------------------------------------------------------------------------------

def test_openapi_documents_the_replans_endpoint(spec):
    op = spec["paths"][REPLANS]["post"]
    assert op["requestBody"]["content"]["application/json"]["schema"]["$ref"].endswith("/ReplanRequest")
    assert op["responses"]["200"]["content"]["application/json"]["schema"]["$ref"].endswith("/ReplanResponse")
    assert PROBLEM_JSON in op["responses"]["422"]["content"]
    request = spec["components"]["schemas"]["ReplanRequest"]
    assert {"site", "current"} <= set(request.get("required", []))
    assert {"mode", "requirements", "search"} <= set(request["properties"])
    changes = spec["components"]["schemas"]["Changes"]["properties"]
    assert {"count", "lower_bound", "proven_minimal", "removed_systems"} <= set(changes)
