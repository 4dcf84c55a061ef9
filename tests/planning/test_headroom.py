"""Headroom: spare channels above the profile's minimum and the channels each system can lose.

The default is sized for one typical interferer (common practice: a 2.4 GHz Wi-Fi channel occupies about
22 MHz; a 2 MHz emitter on the sub-GHz bands); the count of grid channels it takes is checked against a
brute-force slide of the emitter across the grid.
"""

from __future__ import annotations

import numpy as np
import pytest

from cohop import samples
from cohop.jobs.answers import prepared
from cohop.jobs.requests import load_plan_request
from cohop.planning.headroom import channels_lost, fitting_count, typical_interferer
from cohop.planning.instance import build_instance
from cohop.planning.requirements import PlanRequirements, SystemRequirement


def _brute_force_lost(width_hz: float, bandwidth_hz: float, spacing_hz: float) -> int:
    """Most grid channels (bandwidth_hz wide) whose band overlaps an emitter width_hz wide, sliding the
    emitter's centre across one grid step in fine steps."""
    centres = spacing_hz * np.arange(-200, 201)
    best = 0
    for shift in np.linspace(0.0, spacing_hz, 997, endpoint=False):
        lo, hi = shift - width_hz / 2, shift + width_hz / 2
        overlap = (centres + bandwidth_hz / 2 > lo) & (centres - bandwidth_hz / 2 < hi)
        best = max(best, int(overlap.sum()))
    return best


@pytest.mark.parametrize("width, bandwidth, spacing", [(22e6, 1e6, 1e6), (2e6, 150e3, 200e3),
                                                       (2e6, 300e3, 400e3), (20e6, 1e6, 2e6), (22e6, 2e6, 5e6)])
def test_channels_lost_is_the_worst_alignment(width, bandwidth, spacing):
    assert channels_lost(width, bandwidth, spacing) == _brute_force_lost(width, bandwidth, spacing)


def test_typical_interferer_per_band():
    assert typical_interferer(2441.75e6)[0] == 22e6  # 2.4 GHz: one Wi-Fi channel (common practice)
    assert typical_interferer(915e6)[0] == 2e6  # sub-GHz: a 2 MHz emitter (common practice)
    assert typical_interferer(5787.5e6)[0] == 20e6
    assert typical_interferer(3.5e9) is None


def test_fitting_count_at_a_separation():
    assert fitting_count(np.arange(10), 1) == 10
    assert fitting_count(np.arange(10), 3) == 4  # 0, 3, 6, 9
    assert fitting_count(np.array([0, 1, 5, 6]), 5) == 2


def _sample(name: str, **system_requirements):
    body = samples.load(name)
    req = load_plan_request(body).requirements
    prep = prepared(load_plan_request(body).site)
    if system_requirements:
        req = PlanRequirements(systems=tuple(SystemRequirement(sid, **r) for sid, r in system_requirements.items()))
    return prep, req


@pytest.mark.parametrize("name, width", [("water_works", 2e6), ("open_pit_mine", 2e6),
                                         ("container_terminal", 22e6)])
def test_default_spare_on_the_samples(name, width):
    prep, req = _sample(name)
    inst = build_instance(prep, req)
    for v, room in enumerate(inst.headroom):
        system = prep.site.systems[v]
        assert room.spare_default
        assert room.spare_asked == channels_lost(width, system.bandwidth_hz, prep.spacing_hz)
        back = [c for lo, hi in inst.taken_back.get(v, []) for c in range(lo, hi + 1)]
        clean = inst.allowed[v].copy()
        clean[back] = False  # spare is counted on channels no interferer rule avoids (take_back comes after)
        fit = fitting_count(np.flatnonzero(clean), inst.separation[v])
        assert room.spare_applied == min(room.spare_asked, max(0, fit - room.regulatory_min_channels))
        assert (room.capped_by == "fit") == (room.spare_applied < room.spare_asked)
        assert inst.min_size[v] >= room.regulatory_min_channels + room.spare_applied


def test_explicit_spare_and_caps():
    prep, _ = _sample("water_works")
    ids = [s.id for s in prep.site.systems]
    reqs = {ids[0]: {"spare_channels": 0}, ids[1]: {"spare_channels": 5},
            ids[2]: {"spare_channels": 30, "max_channels": 60}, ids[3]: {"spare_channels": 4000}}
    inst = build_instance(prep, PlanRequirements(systems=tuple(SystemRequirement(k, **r) for k, r in reqs.items())))
    rooms = {r.system: r for r in inst.headroom}
    regulatory = rooms[ids[0]].regulatory_min_channels
    assert inst.min_size[0] == regulatory and rooms[ids[0]].capped_by is None  # bare minimum on request
    assert inst.min_size[1] == regulatory + 5 and not rooms[ids[1]].spare_default
    assert rooms[ids[2]].capped_by == "max_channels" and inst.min_size[2] == 60
    fit = fitting_count(np.flatnonzero(inst.allowed[3]), inst.separation[3])
    assert rooms[ids[3]].capped_by == "fit" and inst.min_size[3] == fit


def test_custom_profile_has_no_default_spare():
    from tests import sites
    from cohop.prepare import prepare_site
    prep = prepare_site(sites.load(sites.site([sites.system("a")], n_channels=30)))
    room = build_instance(prep, PlanRequirements()).headroom[0]
    assert room.spare_asked == 0 and room.typical_interferer is None


def test_plan_answer_states_what_each_system_can_lose(client):
    body = samples.load("container_terminal")
    body["search"] = {"time_limit_s": 1.0}
    answer = client.post("/v1/plans", json=body).get_json()
    plan = {p["id"]: p for p in answer["plan"]}
    for row in answer["headroom"]:
        assert row["channel_count"] == len(plan[row["id"]]["hop_set"])
        assert row["can_lose_channels"] == row["channel_count"] - row["regulatory_min_channels"]
        assert row["can_lose_channels"] >= row["spare_channels_applied"]


def test_negative_spare_is_refused(client):
    body = samples.load("water_works")
    sid = body["site"]["systems"][0]["id"]
    body["requirements"] = {"systems": [{"system": sid, "spare_channels": -1}]}
    resp = client.post("/v1/plans", json=body)
    assert resp.status_code in (400, 422)
    assert "spare_channels" in str(resp.get_json())
