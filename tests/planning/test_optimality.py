"""Plans against brute-force optima on tiny sites, bounds below the optimum, known optima proven."""

import random

import numpy as np
import pytest

from cohop.planning import bound
from cohop.planning.requirements import PlanRequirements, SystemRequirement
from cohop.planning.search import greedy
from cohop.planning.engine import OPTIMAL, SolveSettings, plan_site
from cohop.prepare import prepare_site
from tests import sites
from tests.planning.helpers import brute_force, instance, roomy, tiny_site

FAST = SolveSettings(solver_threads=1, max_solve_s=5.0)


def _plan(inst, work_s=0.6):
    """Plans on `work_s` of work whatever the machine's load (no wall-clock stop: see helpers.roomy)."""
    return plan_site(inst.prep, inst.req, FAST, budget=roomy(work_s))


@pytest.mark.parametrize("seed", range(5))
def test_planner_reaches_the_brute_force_optimum(seed):
    rng = random.Random(seed)
    losses = {(i, j): rng.choice([40.0, 50.0, 60.0, 75.0]) for i in range(3) for j in range(i + 1, 3)}
    inst = instance(tiny_site(3, 6, losses), [2, 3, 2])
    optimum, _ = brute_force(inst)
    result = _plan(inst)
    assert result.report.objective == pytest.approx(optimum, rel=1e-9, abs=1e-15)
    assert result.report.status == OPTIMAL
    assert result.violations == []


@pytest.mark.parametrize("seed", range(5))
def test_column_generation_bound_is_below_the_optimum(seed):
    rng = random.Random(100 + seed)
    losses = {(i, j): rng.choice([35.0, 45.0, 55.0, 70.0]) for i in range(3) for j in range(i + 1, 3)}
    inst = instance(tiny_site(3, 6, losses), [3, 3, 2])  # 8 channel uses on 6 channels: overlaps forced
    optimum, x = brute_force(inst)
    for length in (1, 2, 3):
        result = bound.lower_bound(inst, greedy(inst), length=length, iterations=60)
        assert result.converged
        assert 0.0 < result.bound <= optimum * (1 + 1e-9) + 1e-15, (length, result.bound, optimum)


def _uniform(n_systems: int, n_channels: int, size: int):
    """Identical systems, co-channel harm only (excess 11 dB, first adjacent rejection 11 dB)."""
    systems = [sites.system(f"u{i}", dwell_s=0.01, packet_airtime_s=0.002, activity_fraction=1.0)
               for i in range(n_systems)]
    body = sites.site(systems, coupling_loss_db=60.0, n_channels=n_channels)
    prep = prepare_site(sites.load(body))
    reqs = tuple(SystemRequirement(system=s["id"], min_channels=size, max_channels=size) for s in systems)
    return prep, PlanRequirements(systems=reqs, time_limit_s=2.0)


@pytest.mark.parametrize("n_systems, n_channels, size", [(4, 20, 7), (8, 30, 10), (12, 40, 9)])
def test_known_optimum_balanced_loads(n_systems, n_channels, size):
    # Construction: with identical systems and co-channel harm only, the linearised objective is
    # (beta / N^2) sum_c L_c (L_c - 1) for channel loads L_c summing to S N; it is least when loads differ
    # by at most one (convexity), which a round-robin assignment achieves. Hand-computed optimum.
    prep, req = _uniform(n_systems, n_channels, size)
    result = plan_site(prep, req, FAST, budget=roomy(0.6))
    inst = result.instance
    beta = inst.beta[0, 1]
    q, r = divmod(n_systems * size, n_channels)
    optimum = beta / size**2 * (r * (q + 1) * q + (n_channels - r) * q * (q - 1))
    assert result.report.objective == pytest.approx(optimum, rel=1e-9)
    assert result.report.bound == pytest.approx(optimum, rel=1e-6)
    assert result.report.status == OPTIMAL


def test_known_optimum_zero_when_blocks_fit_with_guards():
    # Construction: windows of one channel (excess between the first and second rejection step) and
    # S blocks of N channels with one empty channel between blocks fit in S (N + 1) - 1 channels:
    # the optimum is 0 and the planner must find a conflict-free layout.
    systems = [sites.system(f"b{i}", dwell_s=0.01, packet_airtime_s=0.002) for i in range(5)]
    body = sites.site(systems, coupling_loss_db=50.0, n_channels=5 * 7 - 1)
    prep = prepare_site(sites.load(body))
    assert (prep.window[~np.eye(5, dtype=bool)] == 1).all()
    reqs = tuple(SystemRequirement(system=s["id"], min_channels=6, max_channels=6) for s in systems)
    result = plan_site(prep, PlanRequirements(systems=reqs), FAST, budget=roomy(1.5))
    assert result.report.objective == 0.0
    assert result.report.status == OPTIMAL
    assert all(f.collision_probability == 0.0 for f in result.assessment.systems)


def test_plan_beats_every_feasible_baseline_on_a_sample():
    from cohop import samples

    site = sites.load(samples.load("water_works_us915")["site"])
    prep = prepare_site(site)
    result = plan_site(prep, PlanRequirements(baselines=("random", "contiguous", "interleaved", "greedy")), FAST,
                       budget=roomy(1.5))
    for b in result.baselines:
        if not b.violations:
            assert result.report.evaluated_objective <= b.objective * (1 + 1e-9), b.name
