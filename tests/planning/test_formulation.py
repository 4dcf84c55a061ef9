"""The formulation interface (`planning.formulation`): each implementation builds, takes a hint, solves and gives
a plan and a bound, checked against brute-force optima on tiny sites (exhaustive search: common practice)."""

from __future__ import annotations

import numpy as np
import pytest

from cohop.planning import formulation, search
from cohop.planning.linear import objective_value, system_estimates
from tests.planning.helpers import brute_force, instance, roomy, tiny_site


def _tiny(objective="weighted_sum"):
    return instance(tiny_site(3, 6, {(0, 1): 40.0, (1, 2): 50.0, (0, 2): 35.0}), [2, 3, 2], objective=objective)


def _limits(gap=0.0):
    return formulation.SolveLimits(roomy(5.0), work_s=2.0, gap=gap)


@pytest.mark.parametrize("objective", ["weighted_sum", "worst_system"])
def test_pair_boolean_cp_sat_proves_the_brute_force_optimum(objective):
    inst = _tiny(objective)
    optimum, _ = brute_force(inst)
    cp = formulation.PairBooleanCpSat(inst, threads=1, seed=0, deterministic=True)
    cp.hint(search.greedy(inst))
    out = cp.solve(_limits())
    assert out.status == "OPTIMAL"
    assert objective_value(inst, system_estimates(inst, out.x)) == pytest.approx(optimum, rel=1e-9)
    assert out.bound <= optimum + 1e-12 and out.bound == pytest.approx(optimum, rel=1e-3)


def test_lagrangian_formulation_gives_a_plan_with_the_counts_and_a_bound_below_the_optimum():
    inst = _tiny()
    optimum, _ = brute_force(inst)
    relaxation = formulation.LagrangianBound(inst)
    relaxation.hint(search.greedy(inst))
    out = relaxation.solve(_limits())
    assert out.bound is not None and out.bound <= optimum + 1e-12 and out.work > 0
    if out.x is not None:
        assert (out.x.sum(axis=1) == inst.sizes).all()
        assert objective_value(inst, system_estimates(inst, out.x)) >= optimum - 1e-12
    assert any("drops" in n for n in out.notes)


def test_a_formulation_without_a_hint_still_bounds():
    inst = _tiny()
    optimum, _ = brute_force(inst)
    out = formulation.LagrangianBound(inst, multipliers=np.zeros(3)).solve(_limits())
    assert out.bound <= optimum + 1e-12
