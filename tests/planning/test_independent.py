"""Independent (lawful) coordination: each system chooses its own hop set in commissioning order.

Checks against the rules of `cohop.planning.independent` (what an adaptive radio does, common practice),
and against the former behaviour the issue reported: every system on the same lowest channels at its
minimum count (the optimum of an objective without inter-system terms when nothing else differs).
"""

from __future__ import annotations

import numpy as np
import pytest

from cohop import samples
from cohop.assess import assess_site
from cohop.jobs.answers import prepared
from cohop.jobs.requests import load_plan_request
from cohop.planning.engine import plan_site
from cohop.planning.independent import (IndependentPlanResult, choose_hop_sets, commissioning_order,
                                        occupancy_seen, own_orders)
from cohop.planning.instance import build_instance
from cohop.planning.requirements import PlanRequirements, SystemRequirement
from cohop.prepare import prepare_site
from tests import sites

SAMPLES = ("water_works", "open_pit_mine", "container_terminal")


def _sample(name: str):
    body = samples.load(name)
    for s in body["site"]["systems"]:
        s.pop("hop_set", None)
        s.pop("sequence", None)
    req = load_plan_request(body)
    return prepared(req.site), req.requirements


def _independent(prep, req, **kw) -> IndependentPlanResult:
    out = plan_site(prep, PlanRequirements(**{**req.__dict__, "coordination": "independent", "time_limit_s": 2.0,
                                              **kw}))
    assert isinstance(out, IndependentPlanResult)
    return out


def _former(prep, req) -> list[np.ndarray]:
    """The former independent mode: each system its lowest-exposure allowed channels at its bare regulatory
    minimum, ties to the lowest channel (so systems with the same exposure all took the same lowest ones)."""
    inst = build_instance(prep, req)
    out = []
    for v, room in enumerate(inst.headroom):
        allowed = np.flatnonzero(inst.allowed[v])
        cost = inst.interferer_cost[v, allowed]
        out.append(np.sort(allowed[np.argsort(cost, kind="stable")][:room.regulatory_min_channels]))
    return out


@pytest.fixture(scope="module", params=SAMPLES)
def sample_plans(request):
    prep, req = _sample(request.param)
    return request.param, prep, req, _independent(prep, req)


def test_samples_beat_the_former_behaviour(sample_plans):
    name, prep, req, result = sample_plans
    former = assess_site(prep, hop_sets=_former(prep, req), detail="system")
    assert result.uniform.weighted_collision < former.weighted_collision, name
    assert not result.violations, name


def test_samples_each_system_takes_every_channel_it_may_use_unless_it_avoids_occupancy(sample_plans):
    name, prep, req, result = sample_plans
    inst = build_instance(prep, req)
    for choice, hs in zip(result.choices, [result.hop_sets[inst.ids.index(c.system)] for c in result.choices]):
        v = inst.ids.index(choice.system)
        may = set(np.flatnonzero(inst.allowed[v] | inst.pinned[v]).tolist())
        assert set(hs.tolist()) <= may
        if not choice.avoided_occupancy and choice.limited_by is None:
            assert set(hs.tolist()) == may, (name, choice.system)
        assert hs.size >= inst.min_size[v]


def test_samples_are_not_all_on_the_same_lowest_channels(sample_plans):
    """The issue's finding: every system on the same lowest channels. Here the plans differ from that."""
    name, prep, req, result = sample_plans
    former = _former(prep, req)
    assert any(not np.array_equal(a, b) for a, b in zip(result.hop_sets, former)), name


def test_the_joint_plan_is_beside_it_and_no_better_than_its_bound(sample_plans):
    name, prep, req, result = sample_plans
    assert result.joint is not None and result.joint.instance.req.coordination == "joint"
    assert result.report.bound <= result.report.objective + 1e-12
    assert result.report.status == "feasible"


def _dense_first_site(threshold_case: bool = True):
    """Two systems on a 20-channel custom grid: the first dense (4 channels, always on, long packets) and
    strongly coupled, so its occupancy on each of its channels is far above the threshold."""
    first = sites.system("dense", dwell_s=0.01, packet_airtime_s=0.008, activity_fraction=1.0)
    second = sites.system("later", dwell_s=0.01, packet_airtime_s=0.004, activity_fraction=0.5)
    body = sites.site([first, second], coupling_loss_db=40.0, n_channels=20)
    prep = prepare_site(sites.load(body))
    req = PlanRequirements(systems=(SystemRequirement("dense", min_channels=4, max_channels=4),
                                    SystemRequirement("later", min_channels=5)), coordination="independent")
    return prep, req


def test_a_later_system_avoids_what_it_hears_and_takes_the_rest():
    prep, req = _dense_first_site()
    inst = build_instance(prep, req)
    sets, choices = choose_hop_sets(inst, [0, 1], "occupancy")
    dense, later = sets
    seen = occupancy_seen(prep, 1, [dense, None])
    heard = set(np.flatnonzero((seen > req.interferer_threshold).any(axis=0)).tolist())
    assert heard, "the dense system must be heard above the threshold for this test to mean anything"
    assert not heard & set(later.tolist())  # distinct channels: the band allows it
    assert set(later.tolist()) == set(range(20)) - heard  # and every other channel
    assert choices[1].occupied_by == ("dense",)


def test_the_interferers_basis_ignores_the_earlier_system():
    prep, req = _dense_first_site()
    inst = build_instance(prep, req)
    sets, _ = choose_hop_sets(inst, [0, 1], "interferers")
    assert set(sets[1].tolist()) == set(range(20))


def test_commissioning_order_decides_who_adapts():
    prep, req = _dense_first_site()
    inst = build_instance(prep, req)
    assert commissioning_order(inst.ids, ("later",)) == [1, 0]
    sets, choices = choose_hop_sets(inst, [1, 0], "occupancy")
    assert sets[1].size == 20  # first on air: the whole band
    assert [c.system for c in choices] == ["later", "dense"]


def test_avoiding_below_the_minimum_takes_back_the_least_occupied_ties_together():
    prep, req = _dense_first_site()
    req = PlanRequirements(systems=(SystemRequirement("dense", min_channels=4, max_channels=4),
                                    SystemRequirement("later", min_channels=18)), coordination="independent")
    inst = build_instance(prep, req)
    sets, choices = choose_hop_sets(inst, [0, 1], "occupancy")
    assert sets[1].size >= 18
    assert choices[1].taken_back > 0


def test_max_channels_keeps_the_least_exposed():
    prep, _ = _dense_first_site()
    req = PlanRequirements(systems=(SystemRequirement("dense", min_channels=4, max_channels=4),
                                    SystemRequirement("later", min_channels=3, max_channels=6)),
                           coordination="independent")
    inst = build_instance(prep, req)
    sets, choices = choose_hop_sets(inst, [0, 1], "occupancy")
    assert sets[1].size == 6 and choices[1].limited_by == "max_channels"
    assert not set(sets[1].tolist()) & set(sets[0].tolist())


def test_orders_are_each_systems_own_not_a_joint_family():
    """A system's order depends only on its own hop set, the seed and its id: changing another system's hop
    set leaves it unchanged (a shared family relabels every member when the union changes)."""
    prep, _ = _dense_first_site()
    same = [np.arange(0, 20, 2), np.arange(0, 20, 2)]
    other = [np.arange(0, 20, 2), np.arange(1, 20, 2)]
    a, _ = own_orders(prep, same, seed=3)
    b, _ = own_orders(prep, other, seed=3)
    assert np.array_equal(a[0].channels, b[0].channels)
    assert not np.array_equal(a[0].channels, a[1].channels)  # same set, own order each (seeded by the id)
    assert {s.construction for s in a} == {"own order"} and len({s.component for s in a}) == 2
    for s, hs in zip(a, same):
        assert sorted(s.channels.tolist()) == hs.tolist()


def test_a_system_that_cannot_reach_its_minimum_is_a_conflict_not_a_crash():
    from cohop.errors import PlanInfeasible
    prep, _ = _dense_first_site()
    req = PlanRequirements(systems=(SystemRequirement("dense", min_channels=4, max_channels=4),
                                    SystemRequirement("later", min_channels=3, excluded_channels=tuple(range(18)))),
                           coordination="independent")
    with pytest.raises(PlanInfeasible) as err:
        plan_site(prep, req)
    assert err.value.conflicts[0].systems == ("later",)


def test_spacing_keeps_pins_and_the_separation():
    from cohop.planning.independent import _select
    from cohop.planning.take_back import spaced
    assert spaced(range(10), 3) == [0, 3, 6, 9]
    assert spaced(range(10), 3, keep=[4]) == [0, 4, 7]
    exposure = np.zeros(10)
    exposure[[0, 9]] = 0.5  # the edges are the most exposed
    chosen = _select(np.arange(10), np.array([4]), exposure, 3, 2)
    assert 4 in chosen and len(chosen) == 2 and abs(chosen[0] - chosen[1]) >= 3 and 0 not in chosen
