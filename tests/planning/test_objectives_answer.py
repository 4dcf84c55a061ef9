"""POST /v1/plans with each objective: the answer's `objectives` and the solver's evaluated objective are
recomputed from the answer's own per-system figures and the request's priority weights."""

from __future__ import annotations

import json
import math

import pytest

from cohop.planning.requirements import OBJECTIVES
from tests import recompute
from tests.plan_api.conftest import (INFEASIBLE, assert_problem, assert_repeats, by_id, plan_ok, post_plan, requirement,
                                     schema_validator, small_request, small_site)

REL = 1e-9
CEILINGS = {"a": {"max_attempt_loss": 0.3}, "b": {"max_residual_loss": 1e-6}, "c": {"max_attempt_loss": 0.2}}


def fragile_request(objective: str | None) -> dict:
    site = small_site()
    for s in site["systems"]:
        s["retry_limit"] = 7
    site["systems"][0].update(retry_limit=0, hops_per_attempt=2)
    body = small_request(site=site, baselines=["contiguous", "greedy"])
    body["search"]["time_limit_s"] = 2.0
    for sid, ceilings in CEILINGS.items():
        requirement(body, sid).update(ceilings)
    if objective is not None:
        body["requirements"]["objective"] = objective
    return body


@pytest.fixture(scope="module")
def answers(client):
    return {k: plan_ok(client, fragile_request(k)) for k in OBJECTIVES}


def recomputed(systems: list[dict], weights: dict[str, float]) -> dict[str, float]:
    """Every objective from per-system figures (answer), priority weights and ceilings (request), plain
    Python: a system's share of a ceiling is its loss over that ceiling."""
    coll = {s["id"]: s["per_hop"]["collision_probability"] for s in systems}
    resid = {s["id"]: s["retries"]["residual_loss_probability"] for s in systems}
    attempt = {s["id"]: s["per_attempt"]["loss_probability"] for s in systems}
    shares = {}
    for sid, ceilings in CEILINGS.items():
        figure = {"max_attempt_loss": attempt[sid], "max_residual_loss": resid[sid]}
        shares[sid] = max(figure[name] / limit for name, limit in ceilings.items())
    worst = max(coll, key=coll.get)
    margin = max(shares, key=shares.get)
    return {"weighted_sum": math.fsum(weights[i] * coll[i] for i in coll), "worst_system": coll[worst],
            "worst_system_id": worst, "residual_loss": math.fsum(weights[i] * resid[i] for i in resid),
            "worst_margin": shares[margin], "worst_margin_system_id": margin}


@pytest.mark.parametrize("objective", OBJECTIVES)
def test_every_objective_is_reported_and_recomputes(answers, objective):
    answer = answers[objective]
    body = fragile_request(objective)
    weights = {s["id"]: s["priority_weight"] for s in body["site"]["systems"]}
    recompute.check_assessment(answer["assessment"])  # the per-system figures themselves
    expected = recomputed(answer["assessment"]["systems"], weights)
    got = answer["objectives"]
    assert set(got) == set(expected)
    assert got["worst_system_id"] == expected["worst_system_id"]
    assert got["worst_margin_system_id"] == expected["worst_margin_system_id"]
    for k in OBJECTIVES:
        assert got[k] == pytest.approx(expected[k], rel=REL, abs=1e-15), k
    solver = answer["solver"]
    assert solver["objective_kind"] == objective
    assert solver["evaluated_objective"] == pytest.approx(expected[objective], rel=REL, abs=1e-15)
    assert answer["comparison"]["plan_objective"] == pytest.approx(expected[objective], rel=REL, abs=1e-15)


@pytest.mark.parametrize("objective", OBJECTIVES)
def test_baselines_are_scored_by_the_requested_objective(answers, objective):
    weights = {s["id"]: s["priority_weight"] for s in fragile_request(objective)["site"]["systems"]}
    for b in answers[objective]["baselines"]:
        rates = {s["id"]: s["collision_probability"] for s in b["systems"]}
        resid = {s["id"]: s["residual_loss_probability"] for s in b["systems"]}
        if objective == "worst_margin":  # attempt loss from the residual: R = L^(k + 1) (cohop.stats.retries)
            retry = {s["id"]: s["retry_limit"] for s in fragile_request(objective)["site"]["systems"]}
            shares = [max({"max_attempt_loss": resid[i] ** (1.0 / (retry[i] + 1)),
                           "max_residual_loss": resid[i]}[name] / limit for name, limit in ceilings.items())
                      for i, ceilings in CEILINGS.items()]
            assert b["objective"] == pytest.approx(max(shares), rel=1e-7), b["name"]
            continue
        expected = {"weighted_sum": math.fsum(weights[i] * rates[i] for i in rates),
                    "worst_system": max(rates.values()),
                    "residual_loss": math.fsum(weights[i] * resid[i] for i in resid)}[objective]
        assert b["objective"] == pytest.approx(expected, rel=REL, abs=1e-15), b["name"]


def test_residual_objective_lowers_residual_loss_and_shows_the_price(answers):
    by_sum, by_residual = answers["weighted_sum"]["objectives"], answers["residual_loss"]["objectives"]
    assert by_residual["residual_loss"] < by_sum["residual_loss"]
    assert by_residual["weighted_sum"] >= by_sum["weighted_sum"]
    solver = answers["residual_loss"]["solver"]
    assert solver["status"] == "feasible" and solver["work"]["objective_rounds"] >= 1
    fragile = [by_id(answers[k]["assessment"]["systems"])["a"]["per_hop"]["collision_probability"]
               for k in ("weighted_sum", "residual_loss")]
    assert fragile[1] < fragile[0]


def test_default_objective_is_weighted_sum(client, answers):
    answer = plan_ok(client, fragile_request(None))
    assert answer["solver"]["objective_kind"] == "weighted_sum"
    assert answer["objectives"]["weighted_sum"] == pytest.approx(answer["solver"]["evaluated_objective"], rel=REL)


def test_answers_match_the_documented_schema(client, answers):
    spec = client.get("/openapi.json").get_json()
    for objective, answer in answers.items():
        errors = list(schema_validator(spec, "PlanResponse").iter_errors(answer))
        assert not errors, (objective, [e.message for e in errors[:5]])


def test_unknown_objective_is_refused_with_its_pointer(client):
    problem = assert_problem(post_plan(client, fragile_request("worst_margin_typo")), 422)
    assert any(e["pointer"] == "/requirements/objective" for e in problem["errors"]), problem


def test_same_request_and_seed_give_the_same_answer(client, answers):
    # the rounds' seeds derive from the request's: the answer repeats unless the wall clock cut a phase
    assert_repeats(answers["residual_loss"], plan_ok(client, fragile_request("residual_loss")))


def test_without_ceilings_worst_margin_is_null(client):
    answer = plan_ok(client, small_request())
    assert answer["objectives"]["worst_margin"] is None and answer["objectives"]["worst_margin_system_id"] is None
    assert answer["objectives"]["residual_loss"] > 0


@pytest.mark.parametrize("objective", ("residual_loss", "worst_margin"))
def test_an_impossible_request_is_a_proven_conflict_under_the_iterated_objectives(client, objective):
    body = fragile_request(objective)
    requirement(body, "a")["excluded_channels"] = list(range(25))  # 5 channels left for a count of 10
    problem = assert_problem(post_plan(client, body), 422, INFEASIBLE)
    assert problem["proven"] is True and any("a" in c["systems"] for c in problem["conflicts"])


def test_worst_margin_needs_a_ceiling(client):
    body = small_request()
    body["requirements"]["objective"] = "worst_margin"
    problem = assert_problem(post_plan(client, body), 422)
    assert any(e["pointer"] == "/requirements/objective" and "ceiling" in e["detail"]
               for e in problem["errors"]), problem


def test_worst_margin_plan_widens_the_margin(answers):
    by_sum, by_margin = answers["weighted_sum"]["objectives"], answers["worst_margin"]["objectives"]
    assert by_margin["worst_margin"] < by_sum["worst_margin"] < 1.0
    assert answers["worst_margin"]["solver"]["status"] == "feasible"


def test_replan_refuses_the_residual_objective_with_its_pointer(client):
    # re-planning's moves and tolerance target are on the linear objective: residual_loss is refused, not
    # silently planned as weighted_sum
    from cohop import samples

    body = samples.load("water_works_replan")
    body["requirements"] = {"objective": "residual_loss"}
    resp = client.post("/v1/replans", data=json.dumps(body), content_type="application/json")
    problem = resp.get_json(force=True)
    assert resp.status_code == 422, problem
    assert any(e["pointer"] == "/requirements/objective" and "plans only" in e["detail"]
               for e in problem["errors"]), problem
