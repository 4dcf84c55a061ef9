"""Infeasible requirements give the right conflicting set; the validator catches each violation."""

import numpy as np
import pytest

from cohop.planning.diagnose import diagnose
from cohop.planning.instance import build_instance
from cohop.errors import PlanInfeasible
from cohop.planning.requirements import PlanRequirements, SystemRequirement
from cohop.planning.engine import SolveSettings, plan_site
from cohop.planning.validate import validate_plan
from cohop.prepare import prepare_site
from tests import sites
from tests.planning.helpers import instance, tiny_site

FAST = SolveSettings(solver_threads=1, max_solve_s=5.0)


def _kinds(conflicts):
    return sorted({c.requirement for c in conflicts})


def test_too_few_channels_after_explicit_exclusions():
    inst = instance(tiny_site(2, 10), [6, 2], r0={"excluded_channels": (0, 1, 2, 3, 4)})
    conflicts, proven = diagnose(inst)
    assert proven
    assert _kinds(conflicts) == ["channel count", "exclusion"]
    assert all(c.systems == ("s0",) for c in conflicts)
    assert any(c.channels == ((0, 4),) for c in conflicts)


def test_interferer_exclusion_is_taken_back_when_too_few_remain():
    # The interferer hits channels 0..6 of 10 more than the threshold; s0 needs 6: the 3 clean channels cannot
    # hold it, so the least-hit interfered channels are taken back (cohop.planning.take_back; ties together),
    # the plan says so, and the validator accepts them. An explicit exclusion is never taken back.
    body = tiny_site(1, 10)
    body["interferers"] = [{"id": "wlan", "low_hz": 2402e6, "high_hz": 2408e6, "activity_fraction": 0.6,
                            "levels": [{"system": "s0", "level_dbm": -40.0}]}]
    for s in body["systems"]:
        s["fading"] = "none"  # the interferer harms exactly its span and the first adjacent channel
    prep = prepare_site(sites.load(body))
    req = PlanRequirements(systems=(SystemRequirement("s0", min_channels=6, max_channels=6),))
    result = plan_site(prep, req, FAST)
    assert len(result.hop_sets[0]) == 6 and not result.violations
    assert any("taken back" in n and "s0" in n for n in result.report.notes)
    inst = build_instance(prep, req)
    assert inst.taken_back[0] and not validate_plan(inst, result.hop_sets, result.assessment)
    assert (inst.allowed[0] | inst.pinned[0]).sum() >= 6
    explicit = PlanRequirements(systems=(SystemRequirement("s0", min_channels=6, max_channels=6,
                                                           excluded_channels=tuple(range(7))),))
    with pytest.raises(PlanInfeasible) as err:
        plan_site(prep, explicit, FAST)
    assert err.value.proven and "explicit exclusion" in " ".join(c.detail for c in err.value.conflicts)


def test_guarded_pair_that_cannot_fit_is_found_by_cp_sat_assumptions():
    # Two systems with a one-channel window, guarded: 3 + 3 channels and a guard gap need 7; only 6 exist.
    # No single system's arithmetic shows it: the CP-SAT core names the guard and both channel counts.
    body = tiny_site(2, 6, {(0, 1): 50.0})
    inst = instance(body, [3, 3], guard_excess_db=0.0)
    assert inst.guards == [(0, 1, 1)]
    conflicts, proven = diagnose(inst)
    assert proven
    assert "guard" in _kinds(conflicts)
    guard = [c for c in conflicts if c.requirement == "guard"][0]
    assert set(guard.systems) == {"s0", "s1"}


def test_feasible_requirements_diagnose_as_feasible():
    inst = instance(tiny_site(2, 10), [3, 3])
    assert diagnose(inst) == (None, True)


def test_profile_minimum_above_the_band():
    # fcc15.247-902-928 needs 50 channels below 250 kHz bandwidth (47 CFR 15.247(a)(1)(i)); a 40-channel grid cannot.
    body = tiny_site(1, 40)
    body.update(profile="fcc15.247-902-928", band=None, grid={"first_centre_hz": 902.1e6, "spacing_hz": 200e3, "count": 40})
    body["systems"][0].update(bandwidth_hz=150e3, rejection=[{"offset_hz": 200e3, "rejection_db": 40.0}])
    with pytest.raises(PlanInfeasible) as err:
        build_instance(prepare_site(sites.load(body)), PlanRequirements())
    assert any("15.247" in (c.citation or "") for c in err.value.conflicts)


@pytest.mark.parametrize("mutate, kind", [
    (lambda hs: [hs[0][:-1], hs[1]], "channel count"),
    (lambda hs: [np.append(hs[0][:-1], 9), hs[1]], "explicit exclusion"),
    (lambda hs: [hs[0], np.array([0, 1, 2])], "pinned channels"),
    (lambda hs: [np.array([5, 6, 7]), np.array([4, 8, 3])], "guard"),
])
def test_validator_catches_each_violation(mutate, kind):
    inst = instance(tiny_site(2, 12, {(0, 1): 50.0}), [3, 3], r0={"excluded_channels": (9,)},
                    r1={"pinned_channels": (3,)}, guard_excess_db=0.0)
    good = [np.array([0, 1, 6]), np.array([3, 10, 11])]
    assert validate_plan(inst, good) == []
    assert kind in [v.requirement for v in validate_plan(inst, mutate(good))]


def test_validator_checks_the_profile():
    body = tiny_site(1, 60)
    body.update(profile="fcc15.247-902-928", band=None, grid={"first_centre_hz": 902.1e6, "spacing_hz": 200e3, "count": 60})
    body["systems"][0].update(bandwidth_hz=150e3, rejection=[{"offset_hz": 200e3, "rejection_db": 40.0}])
    inst = build_instance(prepare_site(sites.load(body)),  # at the bare minimum: no spare channels
                          PlanRequirements(systems=(SystemRequirement("s0", spare_channels=0),)))
    assert validate_plan(inst, [np.arange(50)]) == []
    kinds = [v.requirement for v in validate_plan(inst, [np.arange(49)])]
    assert "profile rule" in kinds and "channel count" in kinds
