"""The linearised objective and its marginal costs (see `cohop.planning.instance`).

All functions take a boolean occupancy matrix X (systems x channels).
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


def prefix_counts(x: np.ndarray) -> np.ndarray:
    p = np.zeros((x.shape[0], x.shape[1] + 1), dtype=np.int32)
    np.cumsum(x, axis=1, out=p[:, 1:])
    return p


def window_counts(prefix: np.ndarray, w: np.ndarray) -> np.ndarray:
    """F[a, c] = number of a's channels within w[a] of c (0 where w[a] < 0), shape (S, C)."""
    c = prefix.shape[1] - 1
    idx = np.arange(c)[None, :]
    ww = np.maximum(w, 0)[:, None]
    lo = np.clip(idx - ww, 0, c)
    hi = np.clip(idx + ww + 1, 0, c)
    f = np.take_along_axis(prefix, hi, axis=1) - np.take_along_axis(prefix, lo, axis=1)
    f[w < 0] = 0
    return f


def system_estimates(inst: PlanningInstance, x: np.ndarray) -> np.ndarray:
    """Linearised per-hop collision c_v of every system (never below the evaluated figure)."""
    prefix = prefix_counts(x)
    n = inst.sizes.astype(float)
    out = np.zeros(inst.n_systems)
    for v in range(inst.n_systems):
        f = window_counts(prefix, inst.window[v])
        f[v] = 0
        per_channel = inst.interferer_cost[v] + (inst.beta[v] / n) @ f
        out[v] = per_channel[x[v]].sum() / n[v]
    return out


def objective_value(inst: PlanningInstance, estimates: np.ndarray) -> float:
    if inst.req.objective == "worst_system":
        return float(estimates.max())
    return float(inst.weights @ estimates)


def finite_windows(inst: PlanningInstance) -> np.ndarray:
    """Windows with "harmful at every offset" set to -1: such pairs cost the same whatever the channels."""
    return np.where(inst.window >= inst.n_channels - 1, -1, inst.window)


def marginal_costs(inst: PlanningInstance, x: np.ndarray, weights: np.ndarray | None = None) -> np.ndarray:
    """M[v, c]: change of sum_v weights_v c_v if v (alone) added channel c, given the others' channels,
    up to a constant per system (pairs harmed at every offset are left out: they do not depend on c)."""
    w = inst.weights if weights is None else weights
    window = finite_windows(inst)
    prefix = prefix_counts(x)
    coef = inst.pair_coef()
    out = w[:, None] * inst.node_coef()
    for v in range(inst.n_systems):
        as_victim = window_counts(prefix, window[v])  # a's channels in v's windows
        as_source = window_counts(prefix, window[:, v])  # a's channels whose windows hold c
        as_victim[v] = 0
        as_source[v] = 0
        out[v] += (w[v] * coef[v]) @ as_victim + (w * coef[:, v]) @ as_source
    return out


class MarginalTable:
    """Marginal costs kept up to date while systems swap channels (for local search).

    When system a gains channel c, every other system's marginal cost rises on
    the channels within the windows around c; a precomputed stamp per source
    (systems x offsets) applies that in one array operation.
    """

    def __init__(self, inst: PlanningInstance, x: np.ndarray, weights: np.ndarray | None = None):
        self.inst = inst
        w = inst.weights if weights is None else weights
        self.m = marginal_costs(inst, x, w)
        window = finite_windows(inst)
        coef = inst.pair_coef()
        self.stamps = []
        for a in range(inst.n_systems):
            reach = int(max(window[:, a].max(initial=-1), window[a, :].max(initial=-1)))
            if reach < 0:
                self.stamps.append((reach, None))
                continue
            offsets = np.abs(np.arange(-reach, reach + 1))[None, :]
            stamp = ((offsets <= window[:, a][:, None]) * (w * coef[:, a])[:, None]
                     + (offsets <= window[a, :][:, None]) * (w[a] * coef[a, :])[:, None])
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
