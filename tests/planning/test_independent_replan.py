"""Independent re-planning: in commissioning order, a system whose current hop set still stands keeps it
(and its order); any other re-adapts as when it was commissioned (`cohop.planning.independent`)."""

from __future__ import annotations

import numpy as np
import pytest

from cohop import samples
from cohop.jobs.answers import prepared
from cohop.jobs.requests import load_replan_request
from cohop.planning.instance import build_instance
from cohop.planning.independent import own_instance


@pytest.fixture(scope="module")
def replan(client):
    body = samples.load("water_works_replan")
    body["requirements"] = {"coordination": "independent",
                            "systems": [{"system": s["id"], "spare_channels": 0} for s in body["site"]["systems"]]}
    body["search"] = {"time_limit_s": 2.0}
    resp = client.post("/v1/replans", json=body)
    assert resp.status_code == 200, resp.get_json()
    return body, resp.get_json()


def test_kept_systems_still_stand_and_the_others_had_to_move(replan):
    body, answer = replan
    req = load_replan_request(body)
    prep = prepared(req.site)
    inst = own_instance(build_instance(prep, req.requirements))
    current = {c.system: c for c in req.current}
    statuses = {d["id"]: d for d in answer["diff"]}
    assert {d["status"] for d in statuses.values()} == {"kept", "changed"}  # the sample has both
    for v, sid in enumerate(inst.ids):
        hs = np.array(sorted(current[sid].hop_set))
        allowed = (inst.allowed[v] | inst.pinned[v])[hs].all()
        if statuses[sid]["status"] == "kept":
            assert allowed and not statuses[sid]["sequence_changed"]
        elif not allowed:  # a channel now excluded (an interferer): it must be among those dropped
            bad = set(hs[~(inst.allowed[v] | inst.pinned[v])[hs]].tolist())
            assert bad <= set(statuses[sid]["dropped"])


def test_changes_count_channels_newly_set(replan):
    _, answer = replan
    assert answer["changes"]["count"] == sum(len(d["added"]) for d in answer["diff"] if d["status"] != "new system")
    assert answer["changes"]["lower_bound"] <= answer["changes"]["count"]


def test_headroom_in_the_replan_answer(replan):
    _, answer = replan
    plan = {p["id"]: p for p in answer["plan"]}
    for row in answer["headroom"]:
        assert row["spare_channels_applied"] == 0
        assert row["can_lose_channels"] == len(plan[row["id"]]["hop_set"]) - row["regulatory_min_channels"]
