"""Writing a plan into a site (cohop_client.apply_plan) and diffing documents (cohop.workflow)."""

from __future__ import annotations

import copy

import pytest

from cohop.workflow import WorkflowError, current_plan, diff_documents
from cohop_client import PlanShapeError, apply_plan

SITE = {"name": "s", "systems": [{"id": "a", "hop_set": [0, 1, 2], "sequence": [2, 0, 1]}, {"id": "b"},
                                 {"id": "c", "hop_set": [5, 6]}],
        "interferers": [{"id": "wifi"}]}
PLAN = {"plan": [{"id": "a", "hop_set": [3, 1, 2]}, {"id": "b", "hop_set": [7, 8]}],
        "sequences": {"systems": [{"id": "b", "channels": [8, 7]}]},
        "assessment": {"systems": [
            {"id": s, "hop_set": h, "per_hop": {"collision_probability": p},
             "retries": {"residual_loss_probability": p / 10}, "compliance": {"status": "pass"}}
            for s, h, p in (("a", [1, 2, 3], 0.1), ("b", [7, 8], 0.2))]}}


def test_apply_writes_hop_sets_and_orders_and_leaves_the_rest():
    before = copy.deepcopy(SITE)
    out = apply_plan(SITE, PLAN)
    assert SITE == before  # a copy: the caller's site is untouched
    a, b, c = out["systems"]
    assert a["hop_set"] == [1, 2, 3] and "sequence" not in a  # the old order no longer matches: dropped
    assert b["hop_set"] == [7, 8] and b["sequence"] == [8, 7]
    assert c == SITE["systems"][2]  # not in the plan: kept
    assert out["interferers"] == SITE["interferers"]


def test_apply_refuses_a_plan_for_another_site():
    with pytest.raises(PlanShapeError, match="'zz'"):
        apply_plan(SITE, {"plan": [{"id": "zz", "hop_set": [1]}]})
    with pytest.raises(PlanShapeError):
        apply_plan(SITE, {"nothing": 1})


def test_current_plan_from_answer_site_and_request():
    assert current_plan(PLAN) == {"systems": [{"system": "a", "hop_set": [1, 2, 3]},
                                              {"system": "b", "hop_set": [7, 8], "sequence": [8, 7]}]}
    from_site = current_plan({"site": SITE})["systems"]
    assert [s["system"] for s in from_site] == ["a", "c"]  # b has no hop set
    assert current_plan({"current": {"systems": [{"system": "x", "hop_set": [4]}]}})["systems"][0]["system"] == "x"
    with pytest.raises(WorkflowError):
        current_plan({"hello": "world"})


def test_diff_of_sites_lists_systems_interferers_and_channels():
    later = copy.deepcopy(SITE)
    later["systems"] = [{"id": "a", "hop_set": [1, 2, 9]}, {"id": "d", "hop_set": [1]}]
    later["interferers"] = [{"id": "oven"}]
    d = diff_documents(SITE, {"site": later})
    assert (d["from"], d["to"]) == ("site", "site")
    assert d["systems_added"] == ["d"] and d["systems_removed"] == ["b", "c"]
    assert d["interferers_added"] == ["oven"] and d["interferers_removed"] == ["wifi"]
    assert d["systems"] == [{"id": "a", "dropped": [0], "added": [9], "before": None, "after": None}]


def test_diff_of_site_and_plan_carries_the_plans_figures():
    d = diff_documents(SITE, PLAN)
    assert d["to"] == "plan" and "interferers_added" not in d  # a plan says nothing of interferers
    a, b = d["systems"]
    assert (a["dropped"], a["added"], a["after"]["collision_probability"]) == ([0], [3], 0.1)
    assert b["dropped"] is None  # the site gave b no hop set
    with pytest.raises(WorkflowError):
        diff_documents([], PLAN)
