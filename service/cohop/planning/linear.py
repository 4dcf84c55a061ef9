"""The linearised objective and its marginal costs (see `cohop.planning.instance`).

A pair of channel uses (v on c, a on c') costs victim v
pair_coef[v, a] x (constant_harm[v, a] + offset_harm[v, a, |c - c'|]): the
constant part is paid whatever the channels, the varying part (`varying_harm`)
is what the channels change. Costs are summed one offset d at a time, with one
matrix product per offset (`offset_counts`).

Functions of a plan take it as a boolean occupancy matrix X (systems x channels).
"""

from __future__ import annotations

import numpy as np

from cohop.planning.instance import PlanningInstance


def occupancy(hop_sets, n_systems: int, n_channels: int) -> np.ndarray:
    x = np.zeros((n_systems, n_channels), dtype=bool)
    for v, hs in enumerate(hop_sets):
        x[v, np.asarray(hs, dtype=int)] = True
    return x


def hop_sets_of(x: np.ndarray) -> list[np.ndarray]:
    return [np.flatnonzero(row) for row in x]


def varying_harm(inst: PlanningInstance, n_offsets: int | None = None) -> np.ndarray:
    """G[v, a, d] for d = 0 .. n_offsets - 1 (default: the offsets `inst.offset_harm` holds, 0 .. W): the harm a
    pair of channel uses at offset d adds to the constant part (`inst.offset_harm`, zero beyond W)."""
    given = np.asarray(inst.offset_harm, dtype=float)
    n = given.shape[2] if n_offsets is None else max(int(n_offsets), 0)
    out = np.zeros(given.shape[:2] + (n,))
    top = min(n, given.shape[2])
    out[:, :, :top] = given[:, :, :top]
    return out


def pair_costs(inst: PlanningInstance, n_offsets: int | None = None) -> np.ndarray:
    """U[v, a, d] = pair_coef[v, a] x G[v, a, d]: what one pair of channel uses at offset d adds to victim v's
    estimate above the constant part (unweighted)."""
    return inst.pair_coef()[:, :, None] * varying_harm(inst, n_offsets)


def constant_costs(inst: PlanningInstance, counts=None) -> np.ndarray:
    """Each victim's cost from the constant part of the harm: pair_coef x constant_harm on every pair of channel
    uses, N_v N_a of them with the given channel counts (default: the instance's sizes)."""
    n = (inst.sizes if counts is None else np.asarray(counts)).astype(float)
    return (inst.pair_coef() * inst.constant_harm) @ n * n


def offset_counts(x: np.ndarray, d: int) -> np.ndarray:
    """Y[a, c] = number of a's channels at offset exactly d from c (c - d and c + d; c alone for d = 0)."""
    xf = x.astype(float)
    if d == 0:
        return xf
    y = np.zeros_like(xf)
    if d < xf.shape[1]:
        y[:, d:] += xf[:, :-d]
        y[:, :-d] += xf[:, d:]
    return y


def harm_field(costs: np.ndarray, x: np.ndarray) -> np.ndarray:
    """F[v, c] = sum_a sum_d costs[v, a, d] Y_d[a, c] (`offset_counts`): one matrix product per offset."""
    out = np.zeros(x.shape)
    for d in range(costs.shape[2]):
        if costs[:, :, d].any():
            out += costs[:, :, d] @ offset_counts(x, d)
    return out


def system_estimates(inst: PlanningInstance, x: np.ndarray) -> np.ndarray:
    """Linearised per-hop collision c_v of every system (never below the evaluated figure)."""
    own = (inst.node_coef() * x).sum(axis=1)
    varying = (harm_field(pair_costs(inst), x) * x).sum(axis=1)
    return own + varying + constant_costs(inst, x.sum(axis=1))


def objective_value(inst: PlanningInstance, estimates: np.ndarray) -> float:
    if inst.req.objective == "worst_system":
        return float(estimates.max())
    return float(inst.weights @ estimates)


def weighted_pair_costs(inst: PlanningInstance, weights: np.ndarray) -> np.ndarray:
    """P[v, a, d] = w_v U[v, a, d] + w_a U[a, v, d]: the weighted varying cost of one pair of channel uses of v and
    a at offset d, from either side."""
    wu = weights[:, None, None] * pair_costs(inst)
    return wu + wu.transpose(1, 0, 2)


def marginal_costs(inst: PlanningInstance, x: np.ndarray, weights: np.ndarray | None = None) -> np.ndarray:
    """M[v, c]: change of sum_v weights_v c_v if v (alone) added channel c, given the others' channels,
    up to a constant per system (the constant part of the harm is left out: it does not depend on c)."""
    w = inst.weights if weights is None else weights
    return w[:, None] * inst.node_coef() + harm_field(weighted_pair_costs(inst, w), x)


class MarginalTable:
    """Marginal costs kept up to date while systems swap channels (for local search).

    When system a gains channel c, every other system's marginal cost rises on
    the channels within a's and their varying harm of c (by the weighted pair
    cost at each offset); a precomputed stamp per source (systems x offsets)
    applies that in one array operation.
    """

    def __init__(self, inst: PlanningInstance, x: np.ndarray, weights: np.ndarray | None = None):
        self.inst = inst
        w = inst.weights if weights is None else weights
        self.m = marginal_costs(inst, x, w)
        pair = weighted_pair_costs(inst, w)
        self.stamps = []
        for a in range(inst.n_systems):
            reach = int(max(inst.window[:, a].max(initial=-1), inst.window[a, :].max(initial=-1)))
            if reach < 0:
                self.stamps.append((reach, None))
                continue
            stamp = pair[:, a, np.abs(np.arange(-reach, reach + 1))]
            stamp[a] = 0.0
            self.stamps.append((reach, stamp))

    def shift(self, a: int, channel: int, sign: int) -> None:
        """Account for system a gaining (+1) or losing (-1) `channel`."""
        reach, stamp = self.stamps[a]
        if stamp is None:
            return
        c = self.inst.n_channels
        lo, hi = channel - reach, channel + reach + 1
        s_lo, s_hi = max(0, -lo), stamp.shape[1] - max(0, hi - c)
        if sign > 0:
            self.m[:, max(0, lo):min(c, hi)] += stamp[:, s_lo:s_hi]
        else:
            self.m[:, max(0, lo):min(c, hi)] -= stamp[:, s_lo:s_hi]
