"""The planner on soft harm: every consumer computes the linearised objective of DEVELOPERS.md.

Reference (the linearised objective, DEVELOPERS.md; `cohop.planning.instance`): a pair of channel uses, victim
v on c and source a on c', costs v
    beta_va / (N_v N_a) x (constant_harm[v, a] + offset_harm[v, a, |c - c'|]),
offset_harm zero beyond its last offset, and
    c_v = (1 / N_v) sum_{c in A_v} q_v(c) + sum_{a != v} sum_{c in A_v, c' in A_a} (pair cost).
`_direct` evaluates it pair of channels by pair of channels, with no code of the planner's. The instances are
tiny sites (Rayleigh-faded receivers: harm between 0 and 1) whose harm is then replaced by seeded random
fractional harm, non-increasing in the offset, with a constant part on some pairs.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from ortools.sat.python import cp_model

from cohop.assess import assess_site
from cohop.physics import capture
from cohop.planning import bound, lagrange, model
from cohop.planning.linear import MarginalTable, hop_sets_of, marginal_costs, occupancy, system_estimates
from cohop.planning.search import greedy
from cohop.planning.validate import validate_plan
from tests.planning.helpers import instance, tiny_site


def _direct(inst, x: np.ndarray) -> np.ndarray:
    """c_v of every system on occupancy x, straight from the formula (module docstring)."""
    n = inst.sizes.astype(float)
    harm = inst.offset_harm
    out = np.zeros(inst.n_systems)
    for v in range(inst.n_systems):
        own = np.flatnonzero(x[v])
        out[v] = sum(inst.interferer_cost[v, c] for c in own) / n[v]
        for a in range(inst.n_systems):
            if a == v:
                continue
            for c, c2 in itertools.product(own, np.flatnonzero(x[a])):
                d = abs(int(c) - int(c2))
                varying = harm[v, a, d] if d < harm.shape[2] else 0.0
                out[v] += inst.beta[v, a] / (n[v] * n[a]) * (inst.constant_harm[v, a] + varying)
    return out


def _weighted(inst, x: np.ndarray) -> float:
    return float(inst.weights @ _direct(inst, x))


def _soften(inst, seed: int, width: int = 4):
    """Replace the instance's harm by random fractional harm: offset_harm (S, S, width) non-increasing in the
    offset, zero from a random offset on, a constant part on about half the pairs; window follows."""
    rng = np.random.default_rng(seed)
    s = inst.n_systems
    steps = rng.uniform(0.0, 0.15, (s, s, width))
    harm = np.cumsum(steps[:, :, ::-1], axis=2)[:, :, ::-1]  # non-increasing in d
    reach = rng.integers(-1, width, (s, s))
    harm = np.where(np.arange(width)[None, None, :] <= reach[:, :, None], harm, 0.0)
    constant = np.where(rng.random((s, s)) < 0.5, rng.uniform(0.0, 0.4, (s, s)), 0.0)
    idx = np.arange(s)
    harm[idx, idx], constant[idx, idx], reach[idx, idx] = 0.0, 0.0, -1
    inst.offset_harm, inst.constant_harm = harm, constant
    inst.window = np.where(harm.max(axis=2) > 0, reach, -1)
    inst.beta = np.where(~np.eye(s, dtype=bool), np.maximum(inst.beta, rng.uniform(0.05, 0.6, (s, s))), 0.0)
    inst.weights = rng.uniform(0.5, 3.0, s)
    inst.interferer_cost = rng.uniform(0.0, 0.1, inst.interferer_cost.shape)
    return inst


def _tiny(seed: int, sizes=(3, 2, 3), n_channels: int = 9, objective: str = "weighted_sum"):
    rng = np.random.default_rng(1000 + seed)
    losses = {(i, j): float(rng.choice([35.0, 45.0, 55.0])) for i in range(3) for j in range(i + 1, 3)}
    return _soften(instance(tiny_site(len(sizes), n_channels, losses), list(sizes), objective=objective), seed)


def _random_plan(inst, rng) -> np.ndarray:
    return occupancy([rng.choice(np.flatnonzero(inst.allowed[v]), int(inst.sizes[v]), replace=False)
                      for v in range(inst.n_systems)], inst.n_systems, inst.n_channels)


def _plans(inst):
    """Every plan of the instance's counts (tiny instances; no guards, separation 1)."""
    pools = [itertools.combinations(np.flatnonzero(inst.allowed[v]).tolist(), int(inst.sizes[v]))
             for v in range(inst.n_systems)]
    for combo in itertools.product(*[list(p) for p in pools]):
        yield occupancy(combo, inst.n_systems, inst.n_channels)


def _optimum(inst) -> float:
    values = (_direct(inst, x) for x in _plans(inst))
    if inst.req.objective == "worst_system":
        return min(float(v.max()) for v in values)
    return min(float(inst.weights @ v) for v in values)


# --- (1) every evaluation agrees with the formula --------------------------------------------------------------

def test_the_real_kernel_gives_fractional_harm():
    """The tiny sites' receivers are Rayleigh-faded: the kernel's harm is fractional, with a constant part on
    strong pairs (what the tests below randomise further)."""
    inst = instance(tiny_site(3, 9, {(0, 1): 35.0}), [3, 2, 3])
    soft = inst.offset_harm[(inst.offset_harm > 0) & (inst.offset_harm < 1)]
    assert soft.size and (inst.constant_harm > 0).any()
    x = greedy(inst)
    np.testing.assert_allclose(system_estimates(inst, x), _direct(inst, x), rtol=1e-12, atol=1e-15)


@pytest.mark.parametrize("seed", range(6))
def test_linear_estimates_are_the_formula(seed):
    inst = _tiny(seed)
    rng = np.random.default_rng(seed)
    for _ in range(5):
        x = _random_plan(inst, rng)
        np.testing.assert_allclose(system_estimates(inst, x), _direct(inst, x), rtol=1e-12, atol=1e-15)
        assert validate_plan(inst, hop_sets_of(x)) == []


def _model_value(inst, x: np.ndarray) -> tuple[float, np.ndarray]:
    """The CP-SAT model's objective on plan x (pair booleans on where both channels are), weighted and per
    victim, in real units, from its cost terms and its constants."""
    objective = model.Objective()
    _, mv = model.build(inst, [model.ChannelVariables(), objective])
    weighted, per_victim = mv.constant, np.array([model._constant_of(inst, v) for v in range(inst.n_systems)])
    for (v, c), (wc, own) in objective.costs.node.items():
        if x[v, c]:
            weighted, per_victim[v] = weighted + wc, per_victim[v] + own
    for cost in objective.costs.pair:
        pair = mv.z[cost.index]
        if x[pair.v, pair.c] and x[pair.a, pair.c2]:
            weighted += cost.weighted
            per_victim[pair.v] += cost.to_victim
            per_victim[pair.a] += cost.to_source
    return weighted, per_victim


@pytest.mark.parametrize("seed", range(4))
def test_cp_sat_model_costs_are_the_formula(seed):
    inst = _tiny(seed)
    rng = np.random.default_rng(seed)
    for _ in range(4):
        x = _random_plan(inst, rng)
        weighted, per_victim = _model_value(inst, x)
        assert weighted == pytest.approx(_weighted(inst, x), rel=1e-12, abs=1e-15)
        np.testing.assert_allclose(per_victim, _direct(inst, x), rtol=1e-12, atol=1e-15)


def test_cp_sat_solves_the_fixed_plan_to_the_formula():
    """CP-SAT itself, every channel fixed to a plan: its optimum (scaled back, plus the constant) is the
    formula's value within the rounding allowance."""
    inst = _tiny(7)
    x = _random_plan(inst, np.random.default_rng(7))
    m, mv, objective, scale = model.full_model(inst)
    model.minimise(m, mv, inst, objective, scale)
    for (v, c), var in mv.x.items():
        m.add(var == int(x[v, c]))
    solver = cp_model.CpSolver()
    solver.parameters.num_workers = 1
    assert solver.solve(m) == cp_model.OPTIMAL
    value = solver.objective_value / scale.factor + mv.constant
    allowance = model.rounding_allowance(objective, mv, inst, scale)
    assert _weighted(inst, x) - 1e-12 <= value <= _weighted(inst, x) + allowance + 1e-12


@pytest.mark.parametrize("seed", range(4))
def test_marginal_table_after_random_shifts_is_the_formula(seed):
    """After random gains and losses of channels, the kept table equals a fresh one, and a difference of two
    entries of a row is the difference of the formula's weighted objective between the two single additions
    (the per-system constant cancels)."""
    inst = _tiny(seed, n_channels=10)
    rng = np.random.default_rng(seed)
    x = _random_plan(inst, rng)
    weights = rng.uniform(0.2, 2.0, inst.n_systems)
    table = MarginalTable(inst, x, weights)
    for _ in range(40):
        v = int(rng.integers(inst.n_systems))
        c = int(rng.integers(inst.n_channels))
        table.shift(v, c, -1 if x[v, c] else +1)
        x[v, c] = not x[v, c]
    np.testing.assert_allclose(table.m, marginal_costs(inst, x, weights), rtol=1e-12, atol=1e-14)
    for v in range(inst.n_systems):
        free = np.flatnonzero(~x[v])
        c1, c2 = int(free[0]), int(free[-1])
        y1, y2 = x.copy(), x.copy()
        y1[v, c1], y2[v, c2] = True, True
        direct = float(weights @ _direct(inst, y1) - weights @ _direct(inst, y2))
        assert table.m[v, c1] - table.m[v, c2] == pytest.approx(direct, rel=1e-9, abs=1e-14)


def test_model_ceiling_counts_the_constant_part():
    """A victim's loss ceiling holds its whole estimate, the constant part of the harm included: just above the
    formula's c_v on a fixed plan the plan is admitted, just below it is not."""
    inst = _tiny(2)
    v = int(np.argmax(inst.constant_harm.sum(axis=1)))
    x = _random_plan(inst, np.random.default_rng(2))
    c_v = _direct(inst, x)[v]
    for factor, admitted in ((1.0 + 1e-6, True), (1.0 - 1e-6, False)):
        inst.ceilings = np.full(inst.n_systems, np.inf)
        inst.ceilings[v] = c_v * factor
        objective = model.Objective()
        m, mv = model.build(inst, [model.ChannelVariables(), objective])
        costs = [w for pair in objective.costs.node.values() for w in pair]
        costs += [w for cost in objective.costs.pair for w in cost[1:]]
        model.Ceilings(objective, model.Scale.choose(np.array(costs))).add(m, mv, inst, lambda kind, key: None)
        for (u, c), var in mv.x.items():
            m.add(var == int(x[u, c]))
        status = cp_model.CpSolver().solve(m)
        assert (status in (cp_model.OPTIMAL, cp_model.FEASIBLE)) is admitted, factor


# --- (2) every bound stays below the brute-force optimum --------------------------------------------------------

@pytest.mark.parametrize("objective", ["weighted_sum", "worst_system"])
@pytest.mark.parametrize("seed", range(3))
def test_bounds_never_exceed_the_brute_force_optimum(seed, objective):
    inst = _tiny(seed, sizes=(2, 2, 2), n_channels=6, objective=objective)
    optimum = _optimum(inst)
    start = greedy(inst)
    for length in (1, 2, 3):
        result = bound.lower_bound(inst, start, length=length, iterations=60)
        assert result.converged
        assert result.bound <= optimum * (1 + 1e-9) + 1e-12, (length, result.bound, optimum)
    dual = lagrange.lagrangian_bound(inst, optimum, max_iterations=60)
    assert dual.solved and dual.bound <= optimum * (1 + 1e-9) + 1e-12


@pytest.mark.parametrize("seed", range(3))
def test_cp_sat_optimum_is_the_brute_force_optimum(seed):
    inst = _tiny(seed, sizes=(2, 2, 2), n_channels=6)
    optimum = _optimum(inst)
    m, mv, objective, scale = model.full_model(inst)
    model.minimise(m, mv, inst, objective, scale)
    solver = cp_model.CpSolver()
    solver.parameters.num_workers = 1
    assert solver.solve(m) == cp_model.OPTIMAL
    x = model.solution(solver, mv, inst.allowed.shape)
    proven = solver.best_objective_bound / scale.factor + mv.constant - model.rounding_allowance(
        objective, mv, inst, scale)
    assert proven <= optimum * (1 + 1e-9) + 1e-12
    assert _weighted(inst, x) == pytest.approx(optimum, rel=1e-3)  # the scale keeps four significant digits


# --- (3) the linear estimate stays above the evaluated figure (union bound) ------------------------------------

FADINGS = [{"model": "rayleigh"}, {"model": "rayleigh", "interference": "rayleigh"},
           {"model": "rician", "k_factor_db": 6.0}, {"model": "none"}]


@pytest.mark.parametrize("fading", FADINGS, ids=lambda f: "-".join(str(v) for v in f.values()))
@pytest.mark.parametrize("seed", range(3))
def test_linear_estimate_is_above_the_evaluated_figure_on_soft_harm(seed, fading, monkeypatch):
    # 1 - E[prod (1 - alpha rho)] <= sum E[K] alpha rho / N and 1 - prod(1 - x) <= sum x (union bound): the
    # planner's estimate bounds the product law's per-hop collision from above whatever the harm. A Rician victim's
    # evaluated figure combines its transmissions jointly (cohop.joint), which can exceed the sum of their
    # harms (powers add); the planner keeps the per-transmission harm, so the bound is checked on the product
    # law there (the joint law switched off), and the validator judges ceilings on the joint figures.
    monkeypatch.setattr(capture, "JOINT_MAX_TERMS", 0)
    rng = np.random.default_rng(50 + seed)
    losses = {(i, j): float(rng.uniform(30, 70)) for i in range(4) for j in range(i + 1, 4)}
    inst = instance(tiny_site(4, 20, losses, fading=fading), [int(k) for k in rng.integers(3, 10, 4)])
    for _ in range(3):
        x = _random_plan(inst, rng)
        linear = system_estimates(inst, x)
        evaluated = np.array([f.collision_probability for f in assess_site(inst.prep, hop_sets_of(x)).systems])
        assert np.all(linear >= evaluated * (1 - 1e-12) - 1e-15), (linear, evaluated)


def test_pricing_branch_and_bound_stops_on_the_wall_clock_with_a_valid_bound():
    # The column generation's exact pricing stops when the wall clock says so (checked every STOP_CHECK nodes);
    # its bound is then the root's, never above the exact one (cohop.planning.bound).
    from cohop.planning import bound

    inst = _tiny(3, sizes=(3, 2, 3, 2, 3, 2, 3, 2, 3, 2, 3, 2, 3, 2, 3, 2), n_channels=12)
    x = greedy(inst)
    exact = bound.lower_bound(inst, x, length=1, iterations=5)
    old = bound._Pricing.STOP_CHECK
    bound._Pricing.STOP_CHECK = 1
    try:
        stopped = bound.lower_bound(inst, x, length=1, iterations=5, deadline=lambda: True)
    finally:
        bound._Pricing.STOP_CHECK = old
    assert stopped.bound <= exact.bound + 1e-12
