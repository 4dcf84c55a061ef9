"""The plan answer in independent coordination: the joint plan's and the independent plan's figures side by
side, recomputed from the answer alone (tests/recompute.py, an independent re-implementation of the
uniform hopping model), the 15.247(h) caution kept while a joint plan is shown, and the headroom."""

from __future__ import annotations

import pytest

from cohop import samples
from cohop.cautions import COORDINATION_CAUTION
from tests import recompute

REL = 1e-9


def _body(name: str, **requirements) -> dict:
    body = samples.load(name)
    for s in body["site"]["systems"]:
        s.pop("hop_set", None)
        s.pop("sequence", None)
    body["requirements"] = {**(body.get("requirements") or {}), "coordination": "independent", **requirements}
    body["search"] = {"time_limit_s": 2.0, "seed": 0}
    return body


@pytest.fixture(scope="module")
def water_works(client):
    resp = client.post("/v1/plans", json=_body("water_works", commissioning_order=["sludge-crane"]))
    assert resp.status_code == 200, resp.get_json()
    return resp.get_json()


def _collision(victim: dict, hop_sets: dict[str, list[int]]) -> float:
    """The victim's per-hop collision with every system on `hop_sets`, from the answer's source inputs."""
    others = {sid: {"hop_set": hs} for sid, hs in hop_sets.items()}
    victim = {**victim, "hop_set": hop_sets[victim["id"]]}
    if victim["link"]["capture"]["combination"] == "joint":  # a Rician victim: every transmission together
        _, totals = recompute.RicianJoint(victim).channel_figures(others)
        return sum(totals) / len(totals)
    rows = recompute.channel_figures(victim, others)
    return sum(recompute.combine(r.values()) for r in rows) / len(rows)


def test_side_by_side_figures_recompute_from_the_answer(water_works):
    side = water_works["independent"]
    victims = {s["id"]: s for s in water_works["assessment"]["systems"]}
    weights = {sid: s["priority_weight"] for sid, s in victims.items()}
    own = {p["id"]: p["hop_set"] for p in water_works["plan"]}
    joint = {p["id"]: p["hop_set"] for p in side["joint_plan"]}
    for row in side["systems"]:
        v = victims[row["id"]]
        assert row["independent_collision_probability"] == pytest.approx(_collision(v, own), rel=REL)
        assert row["joint_collision_probability"] == pytest.approx(_collision(v, joint), rel=REL)
        assert row["independent_channel_count"] == len(own[row["id"]])
        assert row["joint_channel_count"] == len(joint[row["id"]])
        assert row["cost_of_independence"] == pytest.approx(
            row["independent_collision_probability"] - row["joint_collision_probability"], rel=REL, abs=1e-15)
    rows = side["systems"]
    assert side["independent_objective"] == pytest.approx(
        sum(weights[r["id"]] * r["independent_collision_probability"] for r in rows), rel=REL)
    assert side["joint_objective"] == pytest.approx(
        sum(weights[r["id"]] * r["joint_collision_probability"] for r in rows), rel=REL)
    assert side["objective_cost"] == pytest.approx(side["independent_objective"] - side["joint_objective"], rel=REL)
    assert side["objective_cost"] > 0  # the joint plan is searched for the objective; independence costs


def test_commissioning_order_and_choices_are_stated(water_works):
    side = water_works["independent"]
    assert side["commissioning_order"][0] == "sludge-crane"
    assert [c["system"] for c in side["choices"]] == side["commissioning_order"]
    assert side["independent_basis"] == "occupancy"
    for c in side["choices"]:
        assert c["channel_count"] == len({p["id"]: p for p in water_works["plan"]}[c["system"]]["hop_set"])


def test_caution_kept_while_a_joint_plan_is_shown(water_works):
    assert COORDINATION_CAUTION in water_works["cautions"]
    assert water_works["independent"]["joint_plan"]


def test_joint_answers_have_no_side_by_side(client):
    body = _body("water_works")
    body["requirements"]["coordination"] = "joint"
    answer = client.post("/v1/plans", json=body).get_json()
    assert answer["independent"] is None
    assert COORDINATION_CAUTION in answer["cautions"]


def test_orders_are_the_systems_own(water_works):
    rows = water_works["sequences"]["systems"]
    assert {r["construction"] for r in rows} == {"own order"}


def test_unknown_or_repeated_commissioning_order_is_refused(client):
    for order in (["no-such-system"], ["sludge-crane", "sludge-crane"]):
        resp = client.post("/v1/plans", json=_body("water_works", commissioning_order=order))
        assert resp.status_code in (400, 422), order
        assert "commissioning_order" in str(resp.get_json())
