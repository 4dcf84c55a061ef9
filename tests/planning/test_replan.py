"""Re-planning: fewest changes, proven minimal on small sites by brute force."""

import itertools

import numpy as np
import pytest

from cohop.planning.instance import build_instance
from cohop.planning.linear import objective_value, occupancy, system_estimates
from cohop.planning.replan import CurrentSystem, ReplanMode, replan_site
from cohop.errors import PlanInfeasible
from cohop.planning.requirements import PlanRequirements, SystemRequirement
from cohop.planning.engine import SolveSettings, plan_site
from cohop.prepare import prepare_site
from tests import sites
from tests.planning.helpers import roomy, tiny_site

FAST = SolveSettings(solver_threads=1, max_solve_s=5.0)


def _req(sizes, **kw):
    return PlanRequirements(systems=tuple(SystemRequirement(f"s{i}", min_channels=n, max_channels=n)
                                          for i, n in enumerate(sizes)), time_limit_s=1.0, sequence_packets=1000, **kw)


def _blocker(lo_mhz, hi_mhz, systems, all_systems=("s0", "s1", "s2")):
    """An emitter always on between two channel centres, 5 dB above what the receivers tolerate (wanted
    -60 dBm, SIR 11 dB): on unfaded receivers (`UNFADED`) it hurts those channels only (first adjacent
    rejection 11 dB > 5 dB); a faded receiver would feel it on the next channels too."""
    return {"id": "new", "low_hz": lo_mhz * 1e6, "high_hz": hi_mhz * 1e6, "activity_fraction": 1.0,
            "levels": [{"system": s, "level_dbm": -66.0 if s in systems else -200.0} for s in all_systems]}


#: Receivers judged on the capture threshold (harm 1 or 0): the hand-built blockers below hit exactly the
#: channels they say.
UNFADED = {"fading": "none"}


def _current(prep, hop_sets):
    return [CurrentSystem(s.id, tuple(int(c) for c in h)) for s, h in zip(prep.site.systems, hop_sets)]


def _brute_force_min_changes(inst, old, target):
    choices = []
    for v in range(inst.n_systems):
        pool = np.flatnonzero(inst.allowed[v]).tolist()
        choices.append(list(itertools.combinations(pool, int(inst.sizes[v]))))
    best = None
    for combo in itertools.product(*choices):
        x = occupancy(combo, inst.n_systems, inst.n_channels)
        if objective_value(inst, system_estimates(inst, x)) <= target * (1 + 1e-12):
            changes = int((x & ~old).sum())
            best = changes if best is None else min(best, changes)
    return best


@pytest.mark.parametrize("tolerance", [0.0, 0.05, 0.5])
def test_change_count_is_minimal_against_brute_force(tolerance):
    body = tiny_site(3, 7, {(0, 1): 55.0}, **UNFADED)
    sizes = [2, 2, 2]
    prep0 = prepare_site(sites.load(body))
    before = plan_site(prep0, _req(sizes), FAST, budget=roomy(0.6))
    body["interferers"] = [_blocker(2402, 2403, ["s0", "s1", "s2"])]  # channels 0 and 1 now blocked
    prep = prepare_site(sites.load(body))
    result = replan_site(prep, _req(sizes), _current(prep, before.hop_sets), ReplanMode("tolerance", tolerance), FAST,
                         budget=roomy(0.6))
    inst = build_instance(prep, _req(sizes))
    old = occupancy(before.hop_sets, 3, 7)
    minimum = _brute_force_min_changes(inst, old, result.target)
    assert result.changes == minimum
    assert result.objective <= result.target * (1 + 1e-9)
    assert result.violations == []


def test_no_change_when_the_current_plan_still_fits():
    body = tiny_site(3, 10)
    prep = prepare_site(sites.load(body))
    current = plan_site(prep, _req([3, 3, 3]), FAST, budget=roomy(0.6))
    result = replan_site(prep, _req([3, 3, 3]), _current(prep, current.hop_sets), ReplanMode(), FAST,
                         budget=roomy(0.6))
    assert result.changes == 0 and result.proven_minimal
    assert all(d.status == "kept" and not d.dropped and not d.added for d in result.diffs)


def test_a_blocked_system_changes_only_what_the_interferer_took():
    body = tiny_site(3, 20, **UNFADED)
    prep0 = prepare_site(sites.load(body))
    current = [np.array([0, 1, 2, 3, 4]), np.array([8, 9, 10, 11, 12]), np.array([15, 16, 17, 18, 19])]
    body["interferers"] = [_blocker(2410, 2411, ["s1"])]  # channels 8 and 9, for s1 only
    prep = prepare_site(sites.load(body))
    result = replan_site(prep, _req([5, 5, 5]), _current(prep, current), ReplanMode("tolerance", 1.0), FAST,
                         budget=roomy(0.6))
    diffs = {d.id: d for d in result.diffs}
    assert diffs["s1"].dropped == [8, 9] and len(diffs["s1"].added) == 2
    assert diffs["s0"].status == diffs["s2"].status == "kept"
    assert result.changes == result.lower_bound == 2 and result.proven_minimal
    del prep0


def test_budget_mode_respects_the_budget_and_refuses_one_below_the_bound():
    body = tiny_site(2, 12, {(0, 1): 50.0}, **UNFADED)
    current = [np.array([0, 1, 2, 3]), np.array([2, 3, 4, 5])]
    body["interferers"] = [_blocker(2402, 2403, ["s0"], ("s0", "s1"))]
    prep = prepare_site(sites.load(body))
    cur = _current(prep, current)
    with pytest.raises(PlanInfeasible) as err:
        replan_site(prep, _req([4, 4]), cur, ReplanMode("budget", max_changes=1), FAST, budget=roomy(0.6))
    assert "change budget" in [c.requirement for c in err.value.conflicts]
    result = replan_site(prep, _req([4, 4]), cur, ReplanMode("budget", max_changes=3), FAST, budget=roomy(0.6))
    assert result.lower_bound == 2 <= result.changes <= 3


def test_new_and_removed_systems():
    body = tiny_site(3, 15)
    prep = prepare_site(sites.load(body))
    current = [CurrentSystem("s0", (0, 1, 2)), CurrentSystem("gone", (5, 6, 7))]
    result = replan_site(prep, _req([3, 3, 3]), current, ReplanMode(), FAST, budget=roomy(0.6))
    assert result.removed == ["gone"]
    statuses = {d.id: d.status for d in result.diffs}
    assert statuses["s1"] == statuses["s2"] == "new system"
    assert result.changes == 0  # new systems' channels are not changes
