"""The engine's bound phases: plans from the relaxation, the target gap, the compiled kernels warmed.

Behaviour by work counts, never wall time (helpers.roomy: no wall-clock stop can intervene)."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from cohop import samples
from cohop.planning import jit, lagrange, search
from cohop.planning import engine
from cohop.planning.engine import LAGRANGE_MAX_SYSTEMS, SHARES, SHARES_WITHOUT_CP_SAT, SolveSettings, plan_site
from cohop.planning.linear import objective_value, system_estimates
from cohop.planning.requirements import DEFAULT_TARGET_GAP, PlanRequirements
from cohop.jobs.requests import load_plan_request
from cohop.prepare import prepare_site
from tests import sites
from tests.planning.helpers import instance, roomy, tiny_site

TWO = SolveSettings(solver_threads=2, max_solve_s=60.0)


@pytest.fixture(scope="module")
def water():
    return prepare_site(sites.load(samples.load("water_works")["site"]))


def test_plans_from_the_relaxation_meet_every_hard_requirement():
    """DP paths whose counts are off are repaired to the exact counts, keeping pins, exclusions, separation and
    guards (`search.from_relaxation`), and are no worse than the greedy start after the same polish."""
    body = tiny_site(4, 14, losses={(0, 1): 40.0, (1, 2): 50.0, (0, 2): 35.0})
    inst = instance(body, (3, 4, 3, 2), r0={"pinned_channels": (2,)}, r3={"excluded_channels": (0, 1, 2)})
    inst.separation = np.array([1, 2, 1, 3])
    inst.guards = [(0, 2, 0)]
    upper = objective_value(inst, system_estimates(inst, search.improve(inst, search.greedy(inst))))
    result = lagrange.lagrangian_bound(inst, upper, max_iterations=40)
    assert result.plans and any((p.sum(axis=1) != inst.sizes).any() for p in result.plans)
    x = search.from_relaxation(inst, result.plans)
    assert (x.sum(axis=1) == inst.sizes).all()
    assert not (x & ~inst.allowed).any() and x[0, 2]
    for v in range(inst.n_systems):
        held = np.flatnonzero(x[v])
        assert held.size < 2 or np.diff(held).min() >= inst.separation[v]
    assert not (x[0] & x[2]).any()
    assert objective_value(inst, system_estimates(inst, x)) >= result.bound - 1e-12


def test_a_looser_target_gap_stops_the_search_sooner(water):
    """The same work budget: a target of 90 % is met by the first plan and bound, so the later phases do not run;
    a target of 0 runs them all. Both report honestly whether the plan is within the target."""
    reports = {}
    for gap in (0.9, 0.0):
        result = plan_site(water, PlanRequirements(seed=2, target_gap=gap), TWO, detail="system",
                           with_sequences=False, budget=roomy(3.0))
        reports[gap] = result.report
    loose, tight = reports[0.9], reports[0.0]
    assert loose.gap <= 0.9
    assert "dp_operations" not in loose.work and "dp_operations" in tight.work
    assert sum(loose.work.values()) < sum(tight.work.values())
    assert "lagrangian" in tight.bounds and tight.bound >= tight.bounds["lagrangian"] - 1e-15


def test_the_lagrangian_bound_is_reported_below_the_plan(water):
    result = plan_site(water, PlanRequirements(seed=1, target_gap=0.0), TWO, detail="system", with_sequences=False,
                       budget=roomy(3.0))
    r = result.report
    assert 0.0 < r.bounds["lagrangian"] <= r.objective + 1e-12
    assert any(n.startswith("Lagrangian bound:") and "drops" in n for n in r.notes)


def test_target_gap_in_the_request_form():
    body = {"site": samples.load("water_works")["site"], "search": {"target_gap": 0.05}}
    assert load_plan_request(body).requirements.target_gap == 0.05
    assert load_plan_request({"site": body["site"]}).requirements.target_gap == DEFAULT_TARGET_GAP


def test_kernels_are_warmed_once():
    jit.warm()
    assert jit.warm_seconds() is not None
    assert jit.warm() == 0.0  # the second call has nothing to do


@pytest.mark.parametrize("shares", [SHARES, SHARES_WITHOUT_CP_SAT])
def test_shares_sum_to_one_with_and_without_the_dp(shares):
    """Above LAGRANGE_MAX_SYSTEMS the DP's shares go to the local search; the shares still sum to 1."""
    assert sum(shares.values()) == pytest.approx(1.0)
    notes = []
    big = engine._without_dp(shares, SimpleNamespace(n_systems=LAGRANGE_MAX_SYSTEMS + 1), notes)
    assert sum(big.values()) == pytest.approx(1.0)
    assert big["lagrange"] == big["bound_plans"] == 0.0 and notes
    assert engine._without_dp(shares, SimpleNamespace(n_systems=LAGRANGE_MAX_SYSTEMS), []) is shares


def test_a_short_budget_skips_the_dp_and_says_so(water):
    """One DP solve cannot be interrupted: below MIN_LAGRANGE_WORK_S of work for it the phase does not run."""
    r = plan_site(water, PlanRequirements(seed=1, target_gap=0.0), TWO, detail="system", with_sequences=False,
                  budget=roomy(0.4)).report
    assert "dp_operations" not in r.work and "lagrangian" not in r.bounds
    assert any("Lagrangian bound skipped" in n for n in r.notes)


def test_column_generation_continued_from_its_pool_reaches_the_uninterrupted_bound(water):
    """A column generation stopped after a few iterations and continued from its columns (`pool`) converges to the
    same bound as one run to convergence: at convergence the bound is the master LP's optimum, which the columns
    priced on the way do not change (LP duality; the continued run adds the same kinds of columns)."""
    from cohop.planning import bound
    from cohop.planning.instance import build_instance

    inst = build_instance(water, PlanRequirements(seed=1))
    x = search.improve(inst, search.greedy(inst))
    whole = bound.lower_bound(inst, x, length=2, iterations=400)
    first = bound.lower_bound(inst, x, length=2, iterations=3)
    assert whole.converged and not first.converged and len(first.pool) == first.columns
    more = bound.lower_bound(inst, x, length=2, iterations=400, columns=first.pool)
    assert more.converged and more.bound == pytest.approx(whole.bound, rel=1e-6)
    again = bound.lower_bound(inst, x, length=2, iterations=400, columns=whole.pool)
    assert again.converged and again.columns >= whole.columns  # it holds every column of the run it continues
    assert again.bound == pytest.approx(whole.bound, rel=1e-6)


def test_the_lagrangian_share_continues_the_column_generation_when_the_dp_gives_nothing(water, monkeypatch):
    """When the Lagrangian phase proves nothing (its first DP solve would not fit: simulated here), its share
    continues the column generation and the bound plans' share the local search (with what the column
    generations left), each within its work."""
    req = PlanRequirements(seed=2, target_gap=0.0)
    monkeypatch.setattr(engine, "_lagrange_phase", lambda inst, x, *a, **k: (None, x, False))
    result = plan_site(water, req, TWO, detail="system", with_sequences=False, budget=roomy(3.0))
    r = result.report
    assert not r.stopped_by_wall_clock and "lagrangian" not in r.bounds
    assert any(n.startswith("column generation continued") for n in r.notes)
    shares = SHARES_WITHOUT_CP_SAT if "cp_sat_deterministic_time" not in r.work else SHARES
    # the local search's work: the bound plans' share, and what both column generations left of theirs
    most = shares["bound_plans"] + shares["lagrange"] + shares["column_generation"]
    assert 0 < r.work.get("kicks_continued", 0) <= search.kick_budget(result.instance, most * 3.0)
    assert r.bound <= r.objective + 1e-12
