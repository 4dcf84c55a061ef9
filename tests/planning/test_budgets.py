"""Time limits as work counts: budgets follow the limit, the wall clock stops only overruns and says so,
the server's cap clamps every phase (re-plan and diagnosis included), proven plans end the search early,
and the spacing repair's work is bounded whatever the delay spread. No assertion here reads a clock."""

import itertools
import random
import time

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cohop import samples
from cohop import cpsat
from cohop.planning import search
from cohop.deadline import Deadline
from cohop.planning.diagnose import diagnose
from cohop.planning.replan import RE_SHARES, CurrentSystem, ReplanMode, replan_site
from cohop.planning.requirements import PlanRequirements
from cohop.planning import model
from cohop.planning.engine import (CEILING_SHARE, MIN_CP_SAT_WORK_S, SHARES, SHARES_WITHOUT_CP_SAT, SolveSettings,
                                   plan_site)
from cohop.planning.instance import build_instance
from cohop.prepare import prepare_site
from cohop.sequences.construct import (GROUP_CLAUSES, CommonRelabelling, _group_spacing, build_sequences,
                                      required_spacing_channels, spacing_ceiling)
from tests import sites
from tests.planning.helpers import instance, roomy, tiny_site

TWO = SolveSettings(solver_threads=2, max_solve_s=60.0)
#: CP-SAT checks its deterministic limit between tasks: it may pass it by a little (measured about 6 %).
CP_SAT_OVERSHOOT = 1.3


@pytest.fixture(scope="module")
def water():
    return prepare_site(sites.load(samples.load("water_works")["site"]))


def _cp_sat_work(prep, req) -> float:
    """A work budget whose CP-SAT share is twice what building the full model and MIN_CP_SAT_WORK_S need (the
    sample's faded receivers make the model's size depend on the harm kernel: derived from it, not fixed)."""
    products = model.product_count(build_instance(prep, req))
    return 2.0 * (cpsat.BUILD_S_PER_PRODUCT * products + MIN_CP_SAT_WORK_S) / SHARES["cp_sat"]


def test_work_follows_the_budget(water):
    # A small budget leaves CP-SAT no room once its model is built (its share goes to local search); a
    # larger one runs it. Either way the kicks are exactly the local search's share of the work.
    req = PlanRequirements(seed=3)
    kicks = []
    for work, with_cp_sat in ((0.4, False), (_cp_sat_work(water, req), True)):
        result = plan_site(water, req, TWO, detail="system", with_sequences=False, budget=roomy(work))
        r = result.report
        assert not r.stopped_by_wall_clock
        assert ("cp_sat_deterministic_time" in r.work) == with_cp_sat
        share = (SHARES if with_cp_sat else SHARES_WITHOUT_CP_SAT)["local_search"]
        if np.isfinite(result.instance.ceilings).any():  # the sample's traffic requirements are ceilings
            share -= CEILING_SHARE
        assert r.work["kicks"] == search.kick_budget(result.instance, share * work)
        kicks.append(r.work["kicks"])
    assert kicks[1] > kicks[0]


def test_cp_sat_work_is_its_share_of_the_budget(water):
    req = PlanRequirements(seed=1)
    work = _cp_sat_work(water, req)
    result = plan_site(water, req, TWO, detail="system", with_sequences=False, budget=roomy(work))
    used = result.report.work["cp_sat_deterministic_time"]
    allotted = SHARES["cp_sat"] * work * cpsat.DETERMINISTIC_UNITS_PER_SECOND
    assert 0 < used <= CP_SAT_OVERSHOOT * allotted


def test_same_request_and_seed_same_plan_when_no_wall_clock_stop(water):
    req = PlanRequirements(seed=7)
    a, b = (plan_site(water, req, TWO, detail="system", with_sequences=False, budget=roomy(1.6)) for _ in range(2))
    assert not a.report.stopped_by_wall_clock and not b.report.stopped_by_wall_clock
    assert [h.tolist() for h in a.hop_sets] == [h.tolist() for h in b.hop_sets]
    assert (a.report.objective, a.report.bound, a.report.work) == (b.report.objective, b.report.bound, b.report.work)


def test_a_tiny_wall_clock_window_stops_the_search_and_the_report_says_so(water):
    deadline = Deadline.of(60.0, 60.0)
    budget = deadline.budget(5.0, time.monotonic() + 0.02)  # work for seconds, a window of 20 ms
    result = plan_site(water, PlanRequirements(), TWO, detail="system", with_sequences=False, budget=budget)
    r = result.report
    assert r.stopped_by_wall_clock and "local search" in deadline.stops
    assert any("wall clock stopped" in n and "may differ" in n for n in r.notes)
    assert r.work.get("kicks", 0) < search.kick_budget(result.instance, SHARES["local_search"] * 5.0)
    assert result.violations == []  # still a valid plan


def test_the_server_cap_clamps_the_limit_and_the_answer_says_so(water):
    r = plan_site(water, PlanRequirements(time_limit_s=100.0), SolveSettings(max_solve_s=0.5)).report
    assert (r.time_limit_s, r.requested_time_limit_s) == (0.5, 100.0)
    assert any("clamped from 100 s to the server's cap of 0.5 s" in n for n in r.notes)


def test_a_plan_proven_optimal_ends_the_search():
    # Two systems far apart in coupling that can avoid each other entirely: the co-channel bound is 0 and
    # local search reaches 0 at once, so no kick is spent and neither CP-SAT nor column generation runs.
    inst = instance(tiny_site(2, 10, {(0, 1): 60.0}), [3, 3])
    result = plan_site(inst.prep, inst.req, TWO, budget=roomy(2.0))
    r = result.report
    assert r.status == "optimal" and r.objective == 0.0
    assert r.work.get("kicks", 0) == 0 and "cp_sat_deterministic_time" not in r.work
    assert "column generation" not in " ".join(r.notes)


def test_replan_minimum_change_step_is_capped_by_the_server(water):
    """The re-plan's CP-SAT step once got half the request's limit whatever the cap (3600 s: 1800 units)."""
    req = PlanRequirements(time_limit_s=3600.0, sequence_packets=1000)
    current = [CurrentSystem(s.id, tuple(range(v, 129, 5))[:20]) for v, s in enumerate(water.site.systems)]
    result = replan_site(water, req, current, ReplanMode("tolerance", 0.0), SolveSettings(max_solve_s=1.0))
    assert (result.time_limit_s, result.requested_time_limit_s) == (1.0, 3600.0)
    cp_sat = result.work.get("cp_sat_deterministic_time", 0.0)
    assert cp_sat <= CP_SAT_OVERSHOOT * 1.0 * cpsat.DETERMINISTIC_UNITS_PER_SECOND * (RE_SHARES["cp_sat"] +
                                                                                        RE_SHARES["fresh"])


def test_diagnosis_stops_at_the_budget_and_says_it_proved_nothing():
    # Not caught by arithmetic: only CP-SAT's assumptions find the guard conflict (see the diagnosis tests).
    inst = instance(tiny_site(2, 6, {(0, 1): 50.0}), [3, 3], guard_excess_db=0.0)
    deadline = Deadline.of(60.0, 60.0)
    conflicts, proven = diagnose(inst, deadline.budget(1.0, time.monotonic() - 1.0))
    assert not proven and [c.requirement for c in conflicts] == ["time"]
    assert deadline.stops == ["infeasibility diagnosis"]


# --- the spacing repair --------------------------------------------------------------

@pytest.mark.parametrize("spread_s", [1e-9, 1e-12, 1e-15, 5e-324])
def test_a_tiny_delay_spread_asks_for_at_most_the_grid(water, spread_s):
    assert required_spacing_channels(water, spread_s) == water.n_channels


def test_sequences_for_a_tiny_delay_spread_are_built_and_keep_what_the_set_allows(water):
    hop_sets = [np.arange(v, 129, 3)[:40] for v in range(water.n_systems)]
    seqs, _ = build_sequences(water, hop_sets, seed=0, rms_delay_spread_s=1e-15)
    for s, hs in zip(seqs, hop_sets):
        assert sorted(s.channels.tolist()) == hs.tolist()
        gaps = np.abs(np.diff(np.concatenate([s.channels, s.channels[:1]])))
        assert gaps.min() <= spacing_ceiling(hs)


def test_the_repair_keeps_the_order_when_its_work_runs_out():
    channels = np.arange(10)
    family = CommonRelabelling(channels, list(range(10)), 11, [channels], [1], 5)
    family.repair(random.Random(0), work=0)
    assert family.order(0).tolist() == channels.tolist() and family.min_gap(0) == 1


def _best_cyclic_spacing(channels) -> int:
    """Brute force over every cyclic order (the first channel fixed)."""
    first, rest = channels[0], channels[1:]
    best = 0
    for p in itertools.permutations(rest):
        o = (first,) + p
        best = max(best, min(abs(o[i] - o[(i + 1) % len(o)]) for i in range(len(o))))
    return best


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(0, 40), min_size=3, max_size=7, unique=True))
def test_spacing_ceiling_is_never_below_what_an_order_reaches(channels):
    # From memory (no source): the ceiling is an upper bound; brute force gives the true best.
    assert spacing_ceiling(np.array(channels)) >= _best_cyclic_spacing(sorted(channels))


def test_a_group_under_a_tiny_delay_spread_builds_a_bounded_model():
    # Three slot-aligned systems on overlapping 8-channel sets: wide spacing is asked for, the group's
    # model asks for what the sets allow and its clause count stays bounded; the orders are permutations.
    sets = [list(range(0, 16, 2)), list(range(6, 22, 2)), list(range(3, 19, 2))]
    systems = [sites.system(f"s{i}", hs, time_base_group="g", dwell_s=0.01, packet_airtime_s=0.002)
               for i, hs in enumerate(sets)]
    prep = prepare_site(sites.load(sites.site(systems, coupling_loss_db=60.0, n_channels=79)))
    arrays = [np.array(h) for h in sets]
    spacing = _group_spacing(arrays, [0, 1, 2], required_spacing_channels(prep, 1e-15))
    assert spacing <= min(spacing_ceiling(a) for a in arrays)
    close = sum(int((np.abs(a[:, None] - a[None, :]) < spacing).sum()) - a.size for a in arrays)
    assert close * arrays[0].size <= GROUP_CLAUSES
    seqs, _ = build_sequences(prep, arrays, seed=0, rms_delay_spread_s=1e-15)
    assert [sorted(s.channels.tolist()) for s in seqs] == sets


def test_a_wide_group_spacing_is_lowered_until_the_model_fits():
    sets = [np.arange(79), np.arange(79), np.arange(1, 79).tolist() + [0]]
    arrays = [np.sort(np.asarray(a)) for a in sets]
    spacing = _group_spacing(arrays, [0, 1, 2], 79)
    assert 1 <= spacing < spacing_ceiling(arrays[0])
    close = sum(int((np.abs(a[:, None] - a[None, :]) < spacing).sum()) - a.size for a in arrays)
    assert close * arrays[0].size <= GROUP_CLAUSES
    wider = sum(int((np.abs(a[:, None] - a[None, :]) < spacing + 1).sum()) - a.size for a in arrays)
    assert wider * arrays[0].size > GROUP_CLAUSES  # lowered no further than needed
