"""Shared fixtures and checks for the POST /v1/replans tests.

The re-plan sample `water_works_replan` is the water works after a new gateway was logged on the
clarifier roof, with a filter-gallery survey, the plan the radios use now and the tolerance mode.
Every request here runs with FAST search settings to keep the suite quick.
"""

from __future__ import annotations

import copy
import json

import pytest

from cohop import samples
from tests import recompute
from tests.problems import problem_body

REPLANS = "/v1/replans"
PLANS = "/v1/plans"
INFEASIBLE = "urn:cohop:problem:no-feasible-plan"
INVALID = "urn:cohop:problem:invalid-request"
REPLAN_SAMPLE = "water_works_replan"
SITE_SAMPLE = "water_works"
FAST = {"time_limit_s": 1, "sequence_packets": 1000}
SLACK = 1e-9  # relative float slack on objective comparisons
STATUSES = ("kept", "changed", "new system")


def by_id(rows) -> dict:
    return {r["id"]: r for r in rows}


def by_system(rows) -> dict:
    """Current-plan entries by the system they name."""
    return {r["system"]: r for r in rows}


def replan_request(**overrides) -> dict:
    """The re-plan sample with FAST search, `overrides` replacing top-level keys."""
    body = samples.load(REPLAN_SAMPLE)
    body["search"] = dict(FAST)
    body.update(copy.deepcopy(overrides))
    return body


def site_request(**overrides) -> dict:
    """The unchanged water-works sample as a plan request with FAST search."""
    body = samples.load(SITE_SAMPLE)
    body["search"] = dict(FAST)
    body.update(copy.deepcopy(overrides))
    return body


def current_from_plan(answer: dict) -> dict:
    """The current plan the radios would run after loading a plan answer's sequences."""
    return {"systems": [{"system": s["id"], "hop_set": sorted(s["channels"]), "sequence": list(s["channels"])}
                        for s in answer["sequences"]["systems"]]}


def post(client, path: str, body: dict):
    return client.post(path, data=json.dumps(body), content_type="application/json")


def ok(resp) -> dict:
    assert resp.status_code == 200, resp.get_data(as_text=True)[:3000]
    assert resp.mimetype == "application/json"
    return resp.get_json()


def problem(resp, status: int = 422, type_: str | None = None, instance: str = REPLANS) -> dict:
    return problem_body(resp, status, instance, type_)


def pointers(prob: dict) -> dict[str, str]:
    return {e["pointer"]: e["detail"] for e in prob.get("errors", [])}


# --- invariants of a re-plan answer ----------------------------------------------------

def check_replan(body: dict, answer: dict) -> None:
    """Shape and internal consistency of a 200 re-plan answer to request `body`."""
    site_ids = [s["id"] for s in body["site"]["systems"]]
    current = by_system(body["current"]["systems"])
    plan = by_id(answer["plan"])
    assert list(plan) == site_ids
    assert [d["id"] for d in answer["diff"]] == site_ids
    count = 0
    for d in answer["diff"]:
        assert d["status"] in STATUSES, d
        new_set = plan[d["id"]]["hop_set"]
        assert new_set == sorted(set(new_set)) and plan[d["id"]]["channel_count"] == len(new_set)
        if d["id"] not in current:
            assert d["status"] == "new system" and d["before"] is None
            assert d["dropped"] == [] and d["added"] == new_set
            continue
        old = set(current[d["id"]]["hop_set"])
        assert set(d["dropped"]) <= old and not set(d["added"]) & old, d
        assert sorted((old - set(d["dropped"])) | set(d["added"])) == new_set, d["id"]
        assert d["status"] == ("changed" if d["added"] or d["dropped"] else "kept"), d
        assert d["before"] is not None and set(d["after"]) == set(d["before"])
        count += len(d["added"])
    ch = answer["changes"]
    assert ch["count"] == count
    assert 0 <= ch["lower_bound"] <= ch["count"]
    assert sorted(ch["removed_systems"]) == sorted(set(current) - set(site_ids))
    mode = answer["mode"]
    if mode["kind"] == "budget":
        assert ch["count"] <= mode["max_changes"], ch
    else:
        fresh = answer["fresh"]["objective"]
        assert answer["target_objective"] == pytest.approx((1 + mode["tolerance"]) * fresh, rel=1e-12, abs=1e-15)
        reached = answer["objective"] <= (1 + mode["tolerance"]) * fresh * (1 + SLACK) + 1e-15
        assert reached or any("tolerance was not reached" in n for n in answer["notes"]), answer["notes"]
    check_sequences(body, answer)
    assessed = by_id(answer["assessment"]["systems"])
    assert list(assessed) == site_ids
    for sid, p in plan.items():
        assert assessed[sid]["hop_set"] == p["hop_set"]
        assert answer["diff"][site_ids.index(sid)]["after"]["collision_probability"] == pytest.approx(
            assessed[sid]["per_hop"]["collision_probability"], rel=1e-12, abs=1e-15)
    recompute.check_assessment(answer["assessment"])
    for s in answer["assessment"]["systems"]:
        assert all(f["status"] != "fail" for f in s["compliance"]["findings"]), s["compliance"]
    assert any("site survey" in c for c in answer["cautions"]), answer["cautions"]


def check_sequences(body: dict, answer: dict) -> None:
    """A kept hop set with a given current sequence keeps that sequence; every other one visits its set."""
    current = by_system(body["current"]["systems"])
    seqs = by_id(answer["sequences"]["systems"])
    plan = by_id(answer["plan"])
    groups = {s["id"]: s.get("time_base_group") for s in body["site"]["systems"]}
    for d in answer["diff"]:
        seq = seqs[d["id"]]
        assert sorted(set(seq["channels"])) == plan[d["id"]]["hop_set"]
        given = current.get(d["id"], {}).get("sequence")
        grouped = groups.get(d["id"]) is not None  # a slot-aligned group's change may renew its sequences
        if d["status"] == "kept" and given is not None and not grouped:
            assert not d["sequence_changed"], d["id"]
            assert seq["construction"] == "kept" and seq["channels"] == given, d["id"]
        if d["status"] != "kept":
            assert d["sequence_changed"] and seq["construction"] != "kept", d["id"]


# --- fixtures ------------------------------------------------------------------------



@pytest.fixture(scope="session")
def spec(client):
    return client.get("/openapi.json").get_json()


@pytest.fixture(scope="session")
def sample_replan(client):
    """(request, answer) of the re-plan sample, posted once per session."""
    body = replan_request()
    answer = ok(post(client, REPLANS, body))
    return body, answer


@pytest.fixture(scope="session")
def fresh_plan(client):
    """(request, answer) of a fresh plan of the unchanged water works, posted once per session."""
    body = site_request()
    return body, ok(post(client, PLANS, body))


# --- a small custom-profile site (four systems on 30 x 1 MHz) ------------------------------

SMALL_SIZES = {"a": 4, "b": 4, "c": 3, "d": 3}


def small_request(**overrides) -> dict:
    """Four systems, every pair coupled explicitly; the requirements fix each system's count."""
    rejection = [{"offset_hz": 1e6, "rejection_db": 11.0}, {"offset_hz": 2e6, "rejection_db": 41.0},
                 {"offset_hz": 3e6, "rejection_db": 51.0}]
    ids = list(SMALL_SIZES)
    systems = [{"id": s, "tx_power_dbm": 0.0, "antenna_gain_dbi": 0.0, "bandwidth_hz": 1e6, "dwell_s": 0.01,
                "packet_airtime_s": 0.004, "activity_fraction": 0.5, "required_sir_db": 11.0,
                "rejection": copy.deepcopy(rejection), "wanted_signal_dbm": -60.0, "fade_margin_db": 20.0,
                "retry_limit": 3, "priority_weight": 1.0 + i} for i, s in enumerate(ids)]
    entries = [{"from_system": a, "to_system": b, "loss_db": 40.0} for i, a in enumerate(ids) for b in ids[i + 1:]]
    site = {"name": "replan test site", "profile": "custom", "band": {"low_hz": 2400e6, "high_hz": 2432e6},
            "grid": {"first_centre_hz": 2402e6, "spacing_hz": 1e6, "count": 30}, "systems": systems,
            "coupling": {"entries": entries}, "interferers": []}
    body = {"site": site, "search": dict(FAST),
            "requirements": {"systems": [{"system": s, "min_channels": n, "max_channels": n}
                                         for s, n in SMALL_SIZES.items()]}}
    body.update(copy.deepcopy(overrides))
    return body
