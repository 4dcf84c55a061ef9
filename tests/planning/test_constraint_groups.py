"""Each constraint group of the CP-SAT model alone: fix the channels, check feasible or infeasible."""

import numpy as np
from ortools.sat.python import cp_model

from cohop.planning import model
from tests.planning.helpers import instance, tiny_site


def _status(inst, groups, fixed: dict[tuple[int, int], int]) -> int:
    m, mv = model.build(inst, [model.ChannelVariables(keep_excluded=True)] + groups)
    for (v, c), value in fixed.items():
        m.add(mv.x[v, c] == value)
    return cp_model.CpSolver().solve(m)


def _fix(inst, hop_sets):
    """Every channel of every system fixed: 1 if in its hop set, else 0."""
    return {(v, c): int(c in hop_sets[v]) for v in range(inst.n_systems) for c in range(inst.n_channels)
            if inst.prep.usable[v, c]}


OK = (cp_model.OPTIMAL, cp_model.FEASIBLE)


def test_channel_counts():
    inst = instance(tiny_site(2, 8), [3, 2])
    assert _status(inst, [model.ChannelCounts()], _fix(inst, [{0, 1, 2}, {5, 6}])) in OK
    assert _status(inst, [model.ChannelCounts()], _fix(inst, [{0, 1}, {5, 6}])) == cp_model.INFEASIBLE


def test_pins():
    inst = instance(tiny_site(2, 8), [3, 2], r0={"pinned_channels": (4,)})
    assert _status(inst, [model.Pins()], _fix(inst, [{0, 4, 7}, {1, 2}])) in OK
    assert _status(inst, [model.Pins()], _fix(inst, [{0, 3, 7}, {1, 2}])) == cp_model.INFEASIBLE


def test_exclusions():
    inst = instance(tiny_site(2, 8), [3, 2], r1={"excluded_channels": (5, 6)})
    assert _status(inst, [model.Exclusions()], _fix(inst, [{5, 6, 7}, {1, 2}])) in OK  # s0 may use them
    assert _status(inst, [model.Exclusions()], _fix(inst, [{0, 1, 2}, {5, 7}])) == cp_model.INFEASIBLE


def test_separation():
    inst = instance(tiny_site(1, 10), [3])
    inst.separation = np.array([3])
    assert _status(inst, [model.Separation()], _fix(inst, [{0, 3, 6}])) in OK
    assert _status(inst, [model.Separation()], _fix(inst, [{0, 2, 6}])) == cp_model.INFEASIBLE


def test_guards():
    inst = instance(tiny_site(2, 10), [2, 2])
    inst.guards = [(0, 1, 1)]  # no channel of s1 within 1 of one of s0's
    assert _status(inst, [model.Guards()], _fix(inst, [{0, 1}, {3, 4}])) in OK
    assert _status(inst, [model.Guards()], _fix(inst, [{0, 1}, {2, 4}])) == cp_model.INFEASIBLE


def test_ceilings():
    # Two systems sharing channels: s0's linearised collision is known by hand (unfaded: harm 1 co-channel, 0
    # elsewhere), so a ceiling just above it is feasible and one just below is not.
    inst = instance(tiny_site(2, 6, fading="none"), [2, 2])
    objective = model.Objective()
    m, mv = model.build(inst, [model.ChannelVariables(keep_excluded=True), objective])
    scale = model.Scale.choose(np.array([c for _, wc, cv, ca in objective.costs.pair for c in (wc, cv, ca)]))
    # s0 on {0, 1}, s1 on {1, 2}: h = 1 on channel 1 only; c_0 = (1/2) * beta / N_1 = beta / 4
    beta = inst.beta[0, 1]
    for ceiling, expected in ((beta / 4 * 1.001, OK), (beta / 4 * 0.999, (cp_model.INFEASIBLE,))):
        inst.ceilings = np.array([ceiling, np.inf])
        m2, mv2 = model.build(inst, [model.ChannelVariables(keep_excluded=True), (obj := model.Objective())])
        model.Ceilings(obj, scale).add(m2, mv2, inst, lambda k, key: None)
        for (v, c), value in _fix(inst, [{0, 1}, {1, 2}]).items():
            m2.add(mv2.x[v, c] == value)
        assert cp_model.CpSolver().solve(m2) in expected


def test_objective_products_follow_the_channels():
    # The pair booleans take the AND of the two channel literals at the optimum (minimisation); unfaded, only
    # co-channel pairs cost anything.
    inst = instance(tiny_site(2, 6, fading="none"), [2, 2])
    objective = model.Objective()
    m, mv = model.build(inst, [model.ChannelVariables(), model.ChannelCounts(), objective])
    scale = model.Scale.choose(np.array([wc for _, wc, _, _ in objective.costs.pair]))
    model.minimise(m, mv, inst, objective, scale)
    for (v, c), value in _fix(inst, [{0, 1}, {1, 2}]).items():
        m.add(mv.x[v, c] == value)
    solver = cp_model.CpSolver()
    assert solver.solve(m) == cp_model.OPTIMAL
    on = [(v, c, a, k) for z, v, c, a, k in mv.z if solver.value(z)]
    assert on == [(0, 1, 1, 1)]
