"""The Lagrangian bound (`planning.lagrange`): never above an optimum found by brute force (tiny sites) or above
the best plan found (random sites, hypothesis); weak duality is the whole argument (common practice: any
Lagrangian value bounds the primal minimum, e.g. Wolsey, Integer Programming, 2nd ed., ch. 10)."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from cohop.planning import bound, channel_dp, lagrange, search
from cohop.planning.linear import objective_value, system_estimates
from tests.planning import helpers


def _inst(loss, sizes, n_channels, objective="weighted_sum", **req):
    body = helpers.tiny_site(len(sizes), n_channels, losses={(0, 1): loss, (1, 2): loss + 10, (0, 2): loss - 5})
    return helpers.instance(body, sizes, objective=objective, **req)


CASES = [(30.0, (2, 2, 2), 5), (40.0, (2, 3, 2), 5), (50.0, (3, 2, 2), 5), (60.0, (2, 2, 1), 6), (40.0, (1, 2, 2), 5)]


@pytest.mark.parametrize("loss, sizes, n_channels", CASES)
def test_bound_below_brute_force_optimum(loss, sizes, n_channels):
    inst = _inst(loss, sizes, n_channels)
    optimum, _ = helpers.brute_force(inst)
    rng = np.random.default_rng(int(loss))
    for lam in [np.zeros(3), rng.uniform(0.0, 0.3, 3), rng.uniform(-0.1, 0.6, 3)]:  # any multipliers bound
        assert lagrange.lagrangian_bound(inst, optimum, lam, max_iterations=1).bound <= optimum + 1e-12
    first = lagrange.lagrangian_bound(inst, optimum, max_iterations=1)
    result = lagrange.lagrangian_bound(inst, optimum, max_iterations=200)
    assert result.solved and result.iterations > 1
    assert first.bound <= result.bound <= optimum + 1e-12  # the best value met is kept


@pytest.mark.parametrize("loss, sizes, n_channels", CASES[:3])
def test_worst_system_bound_below_brute_force_optimum(loss, sizes, n_channels):
    inst = _inst(loss, sizes, n_channels, objective="worst_system")
    optimum, _ = helpers.brute_force(inst)
    for mu in (None, np.array([0.2, 0.5, 0.3])):
        result = lagrange.lagrangian_bound(inst, optimum, dual_weights=mu, max_iterations=100)
        assert result.bound <= optimum + 1e-12


def test_warm_start_is_at_least_the_co_channel_bound():
    """The DP relaxes less than the one-channel pattern LP (it keeps offset 1), so at the LP's converged duals
    its value is at least the LP's bound."""
    inst = _inst(40.0, (2, 3, 2), 7)
    x = search.improve(inst, search.greedy(inst))
    cg = bound.lower_bound(inst, x, length=1, iterations=200)
    assert cg.converged
    at_duals = lagrange.lagrangian_bound(inst, 1.0, cg.multipliers, max_iterations=1)
    assert at_duals.bound >= cg.bound - 1e-12


def test_stops_at_the_target():
    inst = _inst(40.0, (2, 3, 2), 7)
    upper = objective_value(inst, system_estimates(inst, search.improve(inst, search.greedy(inst))))
    full = lagrange.lagrangian_bound(inst, upper, max_iterations=300)
    early = lagrange.lagrangian_bound(inst, upper, max_iterations=300, target=0.5 * full.bound)
    assert early.bound >= 0.5 * full.bound and early.iterations < full.iterations and early.work < full.work


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(losses=st.lists(st.floats(25.0, 70.0), min_size=3, max_size=3), n=st.integers(3, 4),
       per=st.integers(1, 3), seed=st.integers(0, 10_000))
def test_bound_below_best_plan_on_random_sites(losses, n, per, seed):
    body = helpers.tiny_site(n, 12, losses={(0, 1): losses[0], (1, 2): losses[1], (0, 2): losses[2]})
    inst = helpers.instance(body, (per,) * n, seed=seed)
    rng = np.random.default_rng(seed)
    inst.interferer_cost = rng.uniform(0.0, 0.1, inst.interferer_cost.shape)
    x = search.iterated(inst, search.greedy(inst), 30, seed)
    best = objective_value(inst, system_estimates(inst, x))
    result = lagrange.lagrangian_bound(inst, best, max_iterations=60)
    assert result.bound <= best + 1e-12


def test_a_solve_that_would_pass_the_wall_clock_window_is_not_started():
    # One DP solve cannot be interrupted: with no wall-clock time left in the phase's window none starts (the
    # result says the window stopped it); with ample time the window changes nothing (same bound, same work).
    inst = _inst(40.0, (2, 3, 2), 7)
    upper = objective_value(inst, system_estimates(inst, search.improve(inst, search.greedy(inst))))
    capped = lagrange.lagrangian_bound(inst, upper, max_iterations=50, seconds_left=lambda: 0.0)
    assert capped.wall_capped and capped.bound == 0.0 and "wall-clock window" in capped.notes[0]
    free = lagrange.lagrangian_bound(inst, upper, max_iterations=50)
    roomy = lagrange.lagrangian_bound(inst, upper, max_iterations=50, seconds_left=lambda: 1e6)
    assert not roomy.wall_capped and roomy.bound == free.bound and roomy.work == free.work


def test_the_first_solve_rate_decides_what_the_window_admits_and_a_work_refusal_is_not_the_wall_clocks():
    # The first solve's work is estimated once its states are known. With one second left in the window, a rate
    # (the calibrated rate times the budget's speed) that makes that second worth less than the estimate refuses
    # the solve as the window's; a rate worth more runs it. When the work budget refuses it too, it is the work
    # budget's stop (repeatable), not the wall clock's.
    inst = _inst(40.0, (2, 3, 2), 7)
    upper = objective_value(inst, system_estimates(inst, search.improve(inst, search.greedy(inst))))
    rel = channel_dp.relax(inst)
    first = channel_dp.solve(rel, np.zeros(inst.n_systems), lagrange.victim_weights(inst, None))
    assert first.work > 2
    slow = lagrange.lagrangian_bound(inst, upper, max_iterations=1, seconds_left=lambda: 1.0,
                                     first_rate=0.5 * first.states)
    assert slow.wall_capped and slow.iterations == 1
    fast = lagrange.lagrangian_bound(inst, upper, max_iterations=1, seconds_left=lambda: 1.0,
                                     first_rate=2.0 * first.work)
    assert not fast.wall_capped and fast.solved and fast.work == first.work
    both = lagrange.lagrangian_bound(inst, upper, max_iterations=1, seconds_left=lambda: 1.0,
                                     first_rate=0.5 * first.states,
                                     seconds=0.75 * first.states / lagrange.WORK_PER_SECOND)  # window < budget < solve
    assert not both.wall_capped and not both.converged and "budget" in both.notes[0]


def test_the_restricted_dp_keeps_to_the_listed_sets_and_is_the_full_dp_when_they_cover_every_state():
    # The path of the DP restricted to the column generation's sets holds, on every channel, a listed set or none
    # (no pins here); listing every subset gives back the unrestricted optimum (the same DP, nothing removed).
    inst = _inst(40.0, (2, 3, 2), 7)
    lam = np.full(inst.n_systems, 0.05)
    sets = [{0}, {1, 2}]
    path, work = lagrange.restricted_path(inst, lam, sets, max_work=np.inf)
    assert path is not None and work > 0
    listed = {1, 6, 0}  # bit masks of {0}, {1, 2} and the empty set
    assert {int(sum(1 << v for v in np.flatnonzero(path[:, c]))) for c in range(inst.n_channels)} <= listed
    every = [set(s) for r in range(inst.n_systems + 1) for s in itertools.combinations(range(inst.n_systems), r)]
    full_path, _ = lagrange.restricted_path(inst, lam, every, max_work=np.inf)
    rel = channel_dp.relax(inst)
    weights = lagrange.victim_weights(inst, None)
    free = channel_dp.solve(rel, lam, weights)
    assert float(weights @ rel.per_victim(full_path) - lam @ full_path.sum(axis=1)) == pytest.approx(
        float(weights @ rel.per_victim(free.x) - lam @ free.x.sum(axis=1)), abs=1e-12)
