"""The linearised objective: a conservative form of the evaluated model (documented in DEVELOPERS.md)."""

import random

import numpy as np
import pytest

from cohop.assess import assess_site
from cohop.planning.linear import hop_sets_of, marginal_costs, objective_value, system_estimates
from cohop.planning.search import Placement, greedy
from tests.planning.helpers import instance, tiny_site


@pytest.mark.parametrize("seed", range(8))
def test_linear_estimate_never_below_the_evaluated_figure(seed):
    # 1 - E[(1 - p)^K] <= E[K] p and 1 - prod(1 - x) <= sum x (union bound): the planner's estimate is an
    # upper bound of the evaluation model's per-hop collision for every plan (derived; checked here).
    rng = random.Random(seed)
    losses = {(i, j): rng.uniform(40, 80) for i in range(4) for j in range(i + 1, 4)}
    inst = instance(tiny_site(4, 20, losses), [rng.randint(3, 10) for _ in range(4)])
    x = np.zeros_like(inst.allowed)
    for v in range(4):
        x[v, rng.sample(range(20), int(inst.sizes[v]))] = True
    linear = system_estimates(inst, x)
    exact = np.array([f.collision_probability for f in assess_site(inst.prep, hop_sets_of(x)).systems])
    assert np.all(linear >= exact - 1e-15)


def test_linear_estimate_is_exact_for_one_source_with_one_overlap():
    # With a single source whose bursts overlap at most once (T_v + T_a <= D) and no interferer, the
    # union bound is an equality: E[K] p is exactly 1 - E[(1 - p)^K] (with K in {0, 1} the expectation is linear in p: derived by hand).
    inst = instance(tiny_site(2, 10), [4, 6])
    x = np.zeros_like(inst.allowed)
    x[0, [0, 1, 2, 3]] = True
    x[1, [2, 3, 4, 5, 6, 7]] = True
    linear = system_estimates(inst, x)
    exact = [f.collision_probability for f in assess_site(inst.prep, hop_sets_of(x)).systems]
    assert linear == pytest.approx(exact, rel=1e-12)


def test_marginal_costs_are_the_objective_differences():
    # M[v, c] is the change of the weighted objective when v adds channel c (up to a per-system constant,
    # which cancels in a swap): check a swap against two full evaluations.
    inst = instance(tiny_site(3, 12, {(0, 1): 45.0}), [4, 4, 4])
    x = greedy(inst)
    m = marginal_costs(inst, x)
    before = objective_value(inst, system_estimates(inst, x))
    v, c_out = 1, int(np.flatnonzero(x[1])[0])
    c_in = int(np.flatnonzero(~x[1])[0])
    y = x.copy()
    y[v, c_out], y[v, c_in] = False, True
    after = objective_value(inst, system_estimates(inst, y))
    assert after - before == pytest.approx(m[v, c_in] - m[v, c_out], rel=1e-9, abs=1e-15)


def test_incremental_table_matches_a_fresh_one():
    inst = instance(tiny_site(4, 30, {(0, 1): 40.0, (2, 3): 45.0}), [8, 8, 8, 8])
    place = Placement(inst, greedy(inst))
    rng = random.Random(3)
    for _ in range(100):
        v = rng.randrange(4)
        c = int(rng.choice(np.flatnonzero(place.x[v])))
        place.remove(v, c)
        place.add(v, int(rng.choice(np.flatnonzero(~place.x[v]))))
    assert np.allclose(place.table.m, marginal_costs(inst, place.x), atol=1e-15)
