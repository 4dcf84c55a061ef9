"""POST /v1/plans through the Flask test client: plans, requirements, baselines, infeasibility, validation."""

from __future__ import annotations

import pytest

from cohop.api.app import create_app
from cohop.api.schemas.plan import PlanResponseSchema
from tests import recompute
from tests.answer_keys import missing_keys
from tests.problems import set_at

from .conftest import (BASELINE_NAMES, INFEASIBLE, INTERFERED_CHANNELS, INTERFERER_ID, INVALID, PLANS,
                       SAMPLE_NAMES, SIZES, TOL, assert_problem, by_id, check_comparison, check_plan, interfered,
                       plan_ok, post_plan, proven_conflicts, requirement, sample_request, schema_validator,
                       small_request, small_site, assert_repeats, unfaded)


# open_pit runs at the longest allowed limit: the time-budget test below reads its report.
SAMPLE_LIMITS_S = {"open_pit_mine": 2.0}


def _sample_plan(planned, name):
    search = {"time_limit_s": SAMPLE_LIMITS_S.get(name, 0.5), "seed": 0}
    body, status, answer = planned(("sample", name), lambda: sample_request(name, baselines=["all"], search=search))
    assert status == 200, answer
    return body, answer


@pytest.fixture(params=SAMPLE_NAMES)
def sample_plan(request, planned):
    return _sample_plan(planned, request.param)


@pytest.fixture
def small_plan(planned):
    body, status, answer = planned("small", lambda: small_request(baselines=["all"]))
    assert status == 200, answer
    return body, answer


# --- the samples ---------------------------------------------------------------

def test_sample_plan_is_consistent(sample_plan):
    check_plan(*sample_plan)


def test_sample_baselines_and_comparison(sample_plan):
    _, answer = sample_plan
    assert [b["name"] for b in answer["baselines"]] == list(BASELINE_NAMES)
    assert all(isinstance(b["objective"], float) for b in answer["baselines"])
    check_comparison(answer)


def test_sample_cautions(sample_plan):
    body, answer = sample_plan
    text = " ".join(answer["cautions"]).lower()
    assert "planning estimate" in text and "site survey" in text
    assert answer["coordination"] == "joint"
    fcc_like = body["site"]["profile"] in ("fcc15.247-902-928", "rss247-902-928")
    assert ("15.247(h)" in text) == fcc_like


def test_independent_coordination_keeps_the_caution_while_the_joint_plan_is_shown(planned):
    req = sample_request("water_works", requirements={"coordination": "independent"})
    _, status, answer = planned("water-independent", lambda: req)
    assert status == 200, answer
    assert answer["coordination"] == "independent"
    text = " ".join(answer["cautions"]).lower()
    assert "planning estimate" in text and "site survey" in text
    assert ("15.247(h)" in text) == (answer["independent"]["joint_plan"] is not None)


def test_the_report_states_the_limit_and_the_work_done(planned):
    """Time limits are kept by work budgets (see tests/planning/test_budgets.py); the answer states the
    effective limit, the work each phase did, and whether the wall clock had to stop one (then a note)."""
    s = _sample_plan(planned, "open_pit_mine")[1]["solver"]
    assert s["time_limit_s"] == s["requested_time_limit_s"] == 2.0
    assert s["work"]["kicks"] >= 1 and s["work"]["pricing_operations"] > 0
    assert s["stopped_by_wall_clock"] == any("wall clock stopped" in n for n in s["notes"])


# --- the small site: requirements ---------------------------------------------

def test_small_site_plan(small_plan):
    body, answer = small_plan
    check_plan(body, answer)
    recompute.check_inputs_from_request(body["site"], answer["assessment"])
    assert {p["id"]: p["channel_count"] for p in answer["plan"]} == SIZES
    assert answer["solver"]["objective"] > 0  # 34 channels on 30: the bound and gap are not trivial


def test_pins_exclusions_and_count_ranges(client):
    body = small_request()
    requirement(body, "a").update(min_channels=8, max_channels=12)
    requirement(body, "b")["excluded_channels"] = list(range(0, 30, 2))
    requirement(body, "c")["pinned_channels"] = [0, 14, 29]
    answer = plan_ok(client, body)
    check_plan(body, answer)
    plan = {p["id"]: p["hop_set"] for p in answer["plan"]}
    assert 8 <= len(plan["a"]) <= 12
    assert len(plan["b"]) == 10 and all(c % 2 == 1 for c in plan["b"])
    assert {0, 14, 29} <= set(plan["c"]) and len(plan["c"]) == 8


def test_low_interferer_threshold_excludes_the_interfered_channels(client):
    answer = plan_ok(client, (body := interfered(0.05, 6)))
    check_plan(body, answer)
    d = by_id(answer["assessment"]["systems"])["d"]
    lo, hi = by_id(d["sources"])[INTERFERER_ID]["channel_range"]
    assert set(range(lo, hi)) == INTERFERED_CHANNELS
    assert not set(d["hop_set"]) & INTERFERED_CHANNELS


@pytest.mark.parametrize("threshold", [0.2, 0.5])  # 0.2 is the hit probability: "exceeds" keeps it
def test_high_interferer_threshold_keeps_the_channels(client, threshold):
    answer = plan_ok(client, (body := interfered(threshold, 10)))  # only 9 channels are clean
    check_plan(body, answer)
    assert set(by_id(answer["plan"])["d"]["hop_set"]) & INTERFERED_CHANNELS


def test_pin_overrides_interferer_exclusion(client):
    answer = plan_ok(client, interfered(0.05, 6, pins=[3]))
    assert 3 in by_id(answer["plan"])["d"]["hop_set"]


def test_guarded_pairs_keep_out_of_each_others_windows(client):
    body = small_request()
    body["requirements"]["guard_excess_db"] = 30.0
    answer = plan_ok(client, body)
    check_plan(body, answer)
    systems = by_id(answer["assessment"]["systems"])
    guarded = 0
    for v, sv in systems.items():
        for a, sa in systems.items():
            if v >= a:
                continue
            there, back = by_id(sv["sources"])[a], by_id(sa["sources"])[v]
            if max(there["excess_db"], back["excess_db"]) < 30.0:
                continue
            guarded += 1
            w = max(there["window_channels"], back["window_channels"])
            assert min(abs(x - y) for x in sv["hop_set"] for y in sa["hop_set"]) > w, (v, a)
    assert guarded == 3  # a/b, a/c, b/d


def test_loss_ceiling_is_met(client):
    # Unfaded: faded, b hears a (30 dB coupling) at every offset with harm 0.095, and that constant part alone
    # puts b's linearised collision (0.052) above the per-hop ceiling 0.05 implies (0.040).
    body = small_request(site=unfaded(small_site()))
    requirement(body, "b")["max_attempt_loss"] = 0.05
    answer = plan_ok(client, body)
    check_plan(body, answer)
    assert by_id(answer["assessment"]["systems"])["b"]["per_attempt"]["loss_probability"] <= 0.05 * (1 + 1e-9)


def test_worst_system_objective(client):
    body = small_request()
    body["requirements"]["objective"] = "worst_system"
    answer = plan_ok(client, body)
    check_plan(body, answer)
    assert answer["solver"]["objective_kind"] == "worst_system"
    worst = max(s["per_hop"]["collision_probability"] for s in answer["assessment"]["systems"])
    assert answer["solver"]["evaluated_objective"] == pytest.approx(worst, rel=TOL)


def test_independent_report_keeps_objective_above_evaluated(client):
    body = small_request()
    body["requirements"]["coordination"] = "independent"
    answer = plan_ok(client, body)
    assert answer["solver"]["linearisation_error"] >= -1e-12, answer["solver"]


@pytest.mark.parametrize("detail", ["system", "source"])
def test_detail_levels(client, detail):
    answer = plan_ok(client, (body := small_request(detail=detail)))
    check_plan(body, answer)
    channels = [c for s in answer["assessment"]["systems"] for c in s["channels"]]
    assert (not channels) if detail == "system" else all("by_source" in c for c in channels)


# --- baselines, determinism, limits -------------------------------------------

def test_small_site_baselines(small_plan):
    _, answer = small_plan
    baselines = by_id([dict(b, id=b["name"]) for b in answer["baselines"]])
    assert list(baselines) == list(BASELINE_NAMES)
    assert not baselines["whole_band"]["meets_requirements"]  # every channel, not the required count
    assert any(v["requirement"] == "channel count" for v in baselines["whole_band"]["violations"])
    for name in ("contiguous", "interleaved", "greedy"):
        assert [s["channel_count"] for s in baselines[name]["systems"]] == list(SIZES.values())
    check_comparison(answer)


def test_baseline_names_are_deduplicated(client):
    answer = plan_ok(client, small_request(baselines=["greedy", "random", "greedy"]))
    assert [b["name"] for b in answer["baselines"]] == ["greedy", "random"]


def test_same_request_same_answer(client):
    first, second = plan_ok(client, small_request()), plan_ok(client, small_request())
    assert_repeats(first, second)
    assert first["baselines"] == [] and first["comparison"]["ratio"] is None


def test_other_seed_gives_a_valid_plan(client):
    body = small_request(search={"time_limit_s": 0.5, "seed": 12345})
    check_plan(body, plan_ok(client, body))


def test_time_limit_is_capped_by_the_server_and_the_answer_says_so():
    client = create_app({"TESTING": True, "COHOP_MAX_SOLVE_S": 0.3}).test_client()
    answer = plan_ok(client, small_request(search={"time_limit_s": 100.0}))
    s = answer["solver"]
    assert (s["time_limit_s"], s["requested_time_limit_s"]) == (0.3, 100.0)
    assert any("clamped from 100 s to the server's cap of 0.3 s" in n for n in s["notes"])


# --- no feasible plan ---------------------------------------------------------

def test_more_channels_than_the_grid(client):
    body = small_request()
    requirement(body, "a").update(min_channels=40, max_channels=40)
    assert any(c["requirement"] == "channel count" and "a" in c["systems"] for c in proven_conflicts(client, body))


def test_explicit_exclusions_leave_too_few(client):
    body = small_request()
    requirement(body, "a")["excluded_channels"] = list(range(25))
    conflicts = proven_conflicts(client, body)
    assert {"exclusion", "channel count"} <= {c["requirement"] for c in conflicts}
    exclusion = next(c for c in conflicts if c["requirement"] == "exclusion")
    assert exclusion["systems"] == ["a"] and exclusion["channels"] == [[0, 24]]


def test_interferer_exclusion_leaving_too_few_takes_the_least_hit_back(client):
    # d needs 10 channels; the interferer's channels are excluded at threshold 0.05, which leaves too few: the
    # least-hit of them are taken back (cohop.planning.take_back) and the answer's notes say which.
    answer = plan_ok(client, interfered(0.05, 10))
    d = next(p for p in answer["plan"] if p["id"] == "d")
    assert d["channel_count"] == 10
    assert any(n.startswith("d: channels") and "taken back" in n for n in answer["solver"]["notes"])


def test_pins_beyond_max_channels(client):
    body = small_request()
    requirement(body, "a").update(pinned_channels=[1, 2, 3], min_channels=2, max_channels=2)
    assert [c["requirement"] for c in proven_conflicts(client, body)] == ["channel count"]


def test_guarded_pair_that_cannot_fit(client):
    body = small_request(sizes={"a": 4, "b": 4}, site=small_site(ids=("a", "b"), n_channels=8))
    body["requirements"]["guard_excess_db"] = -50.0
    conflicts = proven_conflicts(client, body)
    assert any({"a", "b"} <= set(c["systems"]) and c["requirement"] == "guard" for c in conflicts)


# --- validation -----------------------------------------------------------------

A = ("requirements", "systems", 0)
CASES = [
    (set_at(A + ("system",), "nope"), "/requirements/systems/0/system"),
    (set_at(A + ("pinned_channels",), [30]), "/requirements/systems/0/pinned_channels/0"),
    (set_at(A + ("excluded_channels",), [5, 99]), "/requirements/systems/0/excluded_channels/1"),
    (lambda b: requirement(b, "a").update(pinned_channels=[3], excluded_channels=[3]),
     "/requirements/systems/0/pinned_channels"),
    (set_at(A + ("pinned_channels",), [4, 4]), "/requirements/systems/0/pinned_channels"),
    (lambda b: requirement(b, "a").update(min_channels=5, max_channels=4), "/requirements/systems/0/max_channels"),
    (lambda b: b["requirements"]["systems"].append({"system": "a"}), "/requirements/systems"),
    (set_at(("baselines",), ["whole_band", "clairvoyant"]), "/baselines/1"),
    (set_at(("search", "time_limit_s"), 0), "/search/time_limit_s"),
    (set_at(("requirements", "objective"), "fastest"), "/requirements/objective"),
    (set_at(("requirements", "coordination"), "telepathic"), "/requirements/coordination"),
    (set_at(("requirements", "interferer_threshold"), 1.5), "/requirements/interferer_threshold"),
    (set_at(("requirements", "guard_excess_db"), -51), "/requirements/guard_excess_db"),
    (set_at(("requirements", "surprise"), 1), "/requirements/surprise"),
    (lambda b: b.pop("site"), "/site"),
]


@pytest.mark.parametrize("mutate, pointer", CASES, ids=[p for _, p in CASES])
def test_invalid_request(client, mutate, pointer):
    body = small_request()
    mutate(body)
    problem = assert_problem(post_plan(client, body), 422, INVALID)
    assert pointer in [e["pointer"] for e in problem["errors"]], problem


# --- OpenAPI ------------------------------------------------------------------

def test_openapi_documents_post_plans(spec):
    op = spec["paths"][PLANS]["post"]
    refs = [op["requestBody"]["content"]["application/json"]["schema"]["$ref"],
            op["responses"]["200"]["content"]["application/json"]["schema"]["$ref"],
            op["responses"]["422"]["content"]["application/problem+json"]["schema"]["$ref"]]
    assert [r.rsplit("/", 1)[-1] for r in refs] == ["PlanRequest", "PlanResponse", "InfeasibleProblem"]


def test_plan_bodies_match_documented_schemas(spec, small_plan, client):
    body, answer = small_plan
    for name, instance in (("PlanRequest", body), ("PlanResponse", answer)):
        errors = list(schema_validator(spec, name).iter_errors(instance))
        assert not errors, (name, [e.message for e in errors[:5]])
    assert missing_keys(PlanResponseSchema(), answer) == []
    bad = small_request()
    requirement(bad, "a")["excluded_channels"] = list(range(25))
    problem = assert_problem(post_plan(client, bad), 422, INFEASIBLE)
    errors = list(schema_validator(spec, "InfeasibleProblem").iter_errors(problem))
    assert not errors, [e.message for e in errors[:5]]
