"""The channel DP (`planning.channel_dp`) against full enumeration of its relaxed problem on small instances.

The relaxed objective is re-implemented here from its definition (the instance's pair coefficients and
varying harm, the DP module's text): for every channel c a set t_c of systems, cost
    sum_c sum_{v in t_c} (w_v q_v(c) / N_v - lambda_v)
  + sum over ordered pairs (v, a), v != a, at offset d in {0, 1}: w_v beta_va / (N_v N_a) offset_harm[v, a, d],
and the kept constraints (allowed channels or pins, pins held, separation 2 between consecutive channels,
guards of width 0 and 1). With a history of two channels (`channel_dp.history_for`) offset 2 is kept as well:
its pair costs, separation 3 and guards of width 2 between channels two apart. Every path over the channels
is enumerated (common practice: exhaustive search as the reference for a dynamic programme).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from cohop.planning import channel_dp
from cohop.planning.linear import occupancy, system_estimates
from tests.planning import helpers


def _instance(loss=30.0, sizes=(2, 2, 2), n_channels=5, seed=0, system=None, **req):
    """Three systems (Rayleigh-faded by default: soft harm); `system` overrides every system's fields."""
    body = helpers.tiny_site(len(sizes), n_channels, losses={(0, 1): loss, (1, 2): loss + 10, (0, 2): loss - 5},
                             **(system or {}))
    inst = helpers.instance(body, sizes, **req)
    rng = np.random.default_rng(seed)
    inst.interferer_cost = rng.uniform(0.0, 0.2, inst.interferer_cost.shape)
    return inst


def _relaxed_cost(inst, sets, lam, w, history: int = 1) -> float | None:
    """Cost of one path (a tuple of sets of systems, one per channel), None where a kept constraint fails;
    offsets 1 .. history between channels are kept."""
    s = inst.n_systems
    total = 0.0
    for k, t in enumerate(sets):
        for v in range(s):
            if inst.pinned[v, k] and v not in t:
                return None
        for v in t:
            if not (inst.allowed[v, k] or inst.pinned[v, k]):
                return None
            total += w[v] * inst.interferer_cost[v, k] / inst.sizes[v] - lam[v]
        for v, a in itertools.permutations(t, 2):
            total += w[v] * _pair(inst, v, a, 0)
        for v, a, g in inst.guards:
            if v in t and a in t:
                return None
        for d in range(1, history + 1):
            if k < d:
                continue
            prev = sets[k - d]
            for v in prev:
                if v in t and inst.separation[v] >= d + 1:
                    return None
            for v, a, g in inst.guards:
                if g >= d and ((v in prev and a in t) or (a in prev and v in t)):
                    return None
            for v in prev:
                for a in t:
                    if v == a:
                        continue
                    total += w[v] * _pair(inst, v, a, d) + w[a] * _pair(inst, a, v, d)
    return total


def _pair(inst, v: int, a: int, d: int) -> float:
    """Victim v's varying cost of one pair of channel uses at offset d: beta_va / (N_v N_a) x offset_harm."""
    harm = inst.offset_harm[v, a, d] if d < inst.offset_harm.shape[2] else 0.0
    return float(inst.beta[v, a] / (inst.sizes[v] * inst.sizes[a]) * harm)


def _enumerate(inst, lams, w, history: int = 1) -> np.ndarray:
    """The least relaxed cost over every path, for each row of multipliers `lams` (cost is linear in them)."""
    s = inst.n_systems
    subsets = [frozenset(t) for r in range(s + 1) for t in itertools.combinations(range(s), r)]
    zero = np.zeros(s)
    base, counts = [], []
    for sets in itertools.product(subsets, repeat=inst.n_channels):
        cost = _relaxed_cost(inst, sets, zero, w, history)
        if cost is not None:
            base.append(cost)
            counts.append([sum(v in t for t in sets) for v in range(s)])
    return (np.array(base)[None, :] - np.asarray(lams) @ np.array(counts, float).T).min(axis=1)


def _check(inst, lams, w, history: int = 1) -> None:
    rel = channel_dp.relax(inst, history)
    expected = _enumerate(inst, lams, w, history)
    for lam, value in zip(lams, expected):
        sol = channel_dp.solve(rel, lam, w)
        assert sol.value == pytest.approx(value, abs=1e-12)
        sets = [frozenset(np.flatnonzero(sol.x[:, k]).tolist()) for k in range(inst.n_channels)]
        assert _relaxed_cost(inst, sets, lam, w, history) == pytest.approx(sol.value, abs=1e-12)  # as claimed


@pytest.mark.parametrize("history", [1, 2])
@pytest.mark.parametrize("loss", [30.0, 40.0, 50.0, 60.0, 20.0])
def test_dp_matches_enumeration_on_random_multipliers(loss, history):
    inst = _instance(loss=loss, seed=int(loss))
    rng = np.random.default_rng(int(loss))
    _check(inst, rng.uniform(-0.05, 0.4, (6, inst.n_systems)), inst.weights.astype(float), history)


@pytest.mark.parametrize("history", [1, 2])
def test_dp_keeps_pins_exclusions_separation_and_guards(history):
    inst = _instance(loss=40.0, seed=3, r0={"pinned_channels": (1,)}, r2={"excluded_channels": (0, 4)})
    inst.separation = np.array([1, 2, 3])
    inst.guards = [(0, 2, 1), (0, 1, 2)]
    rng = np.random.default_rng(5)
    _check(inst, rng.uniform(0.0, 0.5, (6, 3)), np.array([1.0, 2.0, 0.5]), history)


def test_history_two_is_chosen_where_affordable_and_bounds_higher():
    # Few systems: the pair DP; its optimum is at least the single-channel DP's at every multiplier (it keeps
    # offset-2 costs, >= 0, that the other drops), and the dropped list starts at offset 3.
    inst = _instance(loss=30.0, seed=11)
    assert channel_dp.history_for(inst) == 2
    two, one = channel_dp.relax(inst), channel_dp.relax(inst, 1)
    assert two.history == 2 and two.dropped.offsets_from == 3 and one.dropped.offsets_from == 2
    w = inst.weights.astype(float)
    rng = np.random.default_rng(11)
    gains = []
    for lam in rng.uniform(0.0, 0.4, (8, 3)):
        a, b = channel_dp.solve(two, lam, w), channel_dp.solve(one, lam, w)
        assert a.value >= b.value - 1e-12
        gains.append(a.value - b.value)
    assert max(gains) > 0  # soft harm at offset 2: some multipliers see it


def test_dense_and_compiled_scans_agree(monkeypatch):
    inst = _instance(loss=40.0, sizes=(3, 2, 3), n_channels=8, seed=7)
    rel = channel_dp.relax(inst, 1)
    lam = np.array([0.3, 0.2, 0.35])
    dense = channel_dp.solve(rel, lam, inst.weights.astype(float))
    monkeypatch.setattr(channel_dp, "DENSE_PAIRS", -1)
    scan = channel_dp.solve(rel, lam, inst.weights.astype(float))
    assert scan.value == pytest.approx(dense.value, abs=1e-12)


#: A receiver whose rejection stops at 30 dB from 2 MHz on: with Rayleigh fading every pair keeps a constant
#: harm at every offset, and its harm varies at offsets 0 and 1 only.
SHALLOW = {"rejection": [{"offset_hz": 1e6, "rejection_db": 11.0}, {"offset_hz": 2e6, "rejection_db": 30.0}]}


def test_relaxed_cost_is_the_objective_when_nothing_is_dropped():
    """With harm varying at offsets 0 and 1 only the relaxation drops nothing: on a plan with the right counts
    its per-victim cost, the constant part of the harm included, is the linearised estimate
    (`planning.linear`)."""
    inst = _instance(loss=40.0, sizes=(2, 2, 2), n_channels=6, system=SHALLOW)
    assert inst.window.max() == 1 and (inst.constant_harm[~np.eye(3, dtype=bool)] > 0).all()
    rel = channel_dp.relax(inst, 1)
    assert not rel.dropped.pairs
    x = occupancy([[0, 3], [1, 3], [2, 5]], 3, 6)
    np.testing.assert_allclose(rel.per_victim(x), system_estimates(inst, x), rtol=1e-12)


def test_wider_windows_are_dropped_and_listed():
    """Unfaded (harm 1 inside the threshold window), only the strongest pair's window reaches offset 2."""
    inst = _instance(loss=30.0, system={"fading": "none"})
    dropped = channel_dp.relax(inst, 1).dropped
    assert {(v, a, d) for v, a, d, _ in dropped.pairs} == {(0, 2, 2), (2, 0, 2)}
    assert "offsets >= 2" in dropped.describe(inst.ids)


def test_soft_harm_beyond_offset_1_is_dropped_at_its_cost():
    """Faded, every pair's harm varies beyond offset 1: each dropped pair is listed with its varying cost
    beta_va / (N_v N_a) x offset_harm[v, a, d]."""
    inst = _instance(loss=30.0)
    dropped = channel_dp.relax(inst, 1).dropped
    expected = {(v, a, d) for v in range(3) for a in range(3) for d in range(2, int(inst.window[v, a]) + 1)}
    assert {(v, a, d) for v, a, d, _ in dropped.pairs} == expected and expected
    for v, a, d, cost in dropped.pairs:
        assert cost == pytest.approx(_pair(inst, v, a, d), rel=1e-12)


def test_harm_table_is_the_constant_and_the_varying_harm():
    """The DP's harm at every grid offset is constant_harm + offset_harm (the constant alone beyond the varying
    part's reach); halving the varying harm at offset 1 halves those pair costs and leaves the constant."""
    inst = _instance(loss=40.0, n_channels=6, system=SHALLOW)
    table = channel_dp.harm_table(inst)
    assert table[:, :, 4] == pytest.approx(inst.constant_harm)
    assert table[:, :, 1] == pytest.approx(inst.constant_harm + inst.offset_harm[:, :, 1])
    before = channel_dp.constant_per_victim(inst)
    inst.offset_harm = inst.offset_harm * np.array([1.0, 0.5])
    assert channel_dp.pair_offset_costs(inst)[1] == pytest.approx(inst.pair_coef() * inst.offset_harm[:, :, 1])
    assert channel_dp.constant_per_victim(inst) == pytest.approx(before)


def test_the_compiled_scan_gives_up_past_its_work(monkeypatch):
    # The scan counts the pairs it evaluates; past the work the solve has left it gives up (no bound from it,
    # over_budget), where a count says, so a budget repeats exactly; with room it finds the same optimum.
    inst = _instance(loss=40.0, sizes=(3, 2, 3), n_channels=8, seed=7)
    rel = channel_dp.relax(inst, 1)
    lam = np.array([0.3, 0.2, 0.35])
    w = inst.weights.astype(float)
    monkeypatch.setattr(channel_dp, "DENSE_PAIRS", -1)
    monkeypatch.setattr(channel_dp, "SCAN_SHARE", 0.0)  # the estimate lets it start whatever the budget
    full = channel_dp.solve(rel, lam, w)
    assert full.complete and full.pairs_scanned > 2
    cut = channel_dp.solve(rel, lam, w, max_work=full.states + full.pairs_scanned // 2)
    assert not cut.complete and cut.over_budget and cut.value == -np.inf
    again = channel_dp.solve(rel, lam, w, max_work=full.states + full.pairs_scanned + 1)
    assert again.complete and again.value == pytest.approx(full.value, abs=1e-12)
