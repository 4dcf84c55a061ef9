"""The CP-SAT model, assembled from named constraint groups.

Variables: x[v, c] (system v hops on channel c) for the channels v may use.
Each group adds its constraints and, for the infeasibility diagnosis, ties
them to one enforcement literal per requirement instance (per system, per
interferer exclusion, per guarded pair) so that CP-SAT assumptions can name
the requirements that conflict. The objective group adds one boolean per
pair of channels (v on c, a on c') inside either system's harmful window,
z >= x[v, c] + x[a, c'] - 1, with the pair's linearised cost; pairs harmed at
every offset cost the same whatever the channels and enter as a constant.

Real-valued costs are scaled to integers by `Scale` (a power of ten chosen
so the smallest cost keeps at least four significant digits); the relative
rounding error is reported with the plan.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable

import numpy as np
from ortools.sat.python import cp_model

from cohop.planning.instance import PlanningInstance

Enforce = Callable[[str, tuple], "cp_model.IntVar | None"]


@dataclass
class ModelVars:
    x: dict[tuple[int, int], cp_model.IntVar] = field(default_factory=dict)
    z: list[tuple[cp_model.IntVar, int, int, int, int]] = field(default_factory=list)  # (z, v, c, a, c')
    constant: float = 0.0  # linearised cost that no choice of channels changes

    def row(self, v: int, n_channels: int) -> list[tuple[int, cp_model.IntVar]]:
        return [(c, self.x[v, c]) for c in range(n_channels) if (v, c) in self.x]


@dataclass(frozen=True)
class Scale:
    factor: float
    max_relative_rounding: float

    @staticmethod
    def choose(costs: np.ndarray) -> "Scale":
        positive = costs[costs > 0]
        if positive.size == 0:
            return Scale(1.0, 0.0)
        smallest, total = float(positive.min()), float(positive.sum())
        exponent = math.ceil(math.log10(1e4 / smallest))
        exponent = min(exponent, math.floor(math.log10(1e15 / max(total, 1e-300))))
        factor = 10.0**exponent
        return Scale(factor, 0.5 / (smallest * factor))

    def __call__(self, value: float) -> int:
        return int(round(value * self.factor))


# --- constraint groups -----------------------------------------------------------

class ChannelVariables:
    """x[v, c] for channels v may use; with `keep_excluded`, excluded channels too (for diagnosis)."""

    name = "channels"

    def __init__(self, keep_excluded: bool = False):
        self.keep_excluded = keep_excluded

    def add(self, m: cp_model.CpModel, mv: ModelVars, inst: PlanningInstance, enforce: Enforce) -> None:
        pool = inst.prep.usable if self.keep_excluded else inst.allowed | inst.pinned
        for v, c in zip(*np.nonzero(pool)):
            mv.x[int(v), int(c)] = m.new_bool_var(f"x_{v}_{c}")


class Exclusions:
    """Diagnosis only: channels excluded (explicitly or by an interferer) stay unused."""

    name = "exclusions"

    def add(self, m, mv, inst, enforce) -> None:
        for v, reasons in inst.exclusions.items():
            for why, runs in reasons:
                lit = enforce("exclusion", (v, why, tuple(runs)))
                for lo, hi in runs:
                    for c in range(lo, hi + 1):
                        if (v, c) in mv.x and not inst.pinned[v, c]:  # a pin overrides an interferer exclusion
                            ct = m.add(mv.x[v, c] == 0)
                            if lit is not None:
                                ct.only_enforce_if(lit)


class ChannelCounts:
    name = "channel count"

    def add(self, m, mv, inst, enforce) -> None:
        for v in range(inst.n_systems):
            lit = enforce("count", (v,))
            row = [var for _, var in mv.row(v, inst.n_channels)]
            ct = m.add(sum(row) == int(inst.sizes[v]))
            if lit is not None:
                ct.only_enforce_if(lit)


class Pins:
    name = "pinned channels"

    def add(self, m, mv, inst, enforce) -> None:
        for v in range(inst.n_systems):
            chans = np.flatnonzero(inst.pinned[v])
            if chans.size == 0:
                continue
            lit = enforce("pins", (v,))
            for c in chans:
                ct = m.add(mv.x[v, int(c)] == 1)
                if lit is not None:
                    ct.only_enforce_if(lit)


class Separation:
    name = "separation"

    def add(self, m, mv, inst, enforce) -> None:
        for v in range(inst.n_systems):
            sep = int(inst.separation[v])
            if sep <= 1:
                continue
            lit = enforce("separation", (v,))
            for c in range(inst.n_channels):
                window = [mv.x[v, k] for k in range(c, min(c + sep, inst.n_channels)) if (v, k) in mv.x]
                if len(window) > 1:
                    ct = m.add(sum(window) <= 1)
                    if lit is not None:
                        ct.only_enforce_if(lit)


class Guards:
    name = "guard"

    def add(self, m, mv, inst, enforce) -> None:
        for v, a, w in inst.guards:
            lit = enforce("guard", (v, a))
            for c in range(inst.n_channels):
                if (v, c) not in mv.x:
                    continue
                for k in range(max(0, c - w), min(inst.n_channels, c + w + 1)):
                    if (a, k) in mv.x:
                        clause = [mv.x[v, c].Not(), mv.x[a, k].Not()]
                        ct = m.add_bool_or(clause)
                        if lit is not None:
                            ct.only_enforce_if(lit)


def _harm_pairs(inst: PlanningInstance):
    """Unordered system pairs with the windows that matter, and pairs harmed at every offset."""
    full = inst.n_channels - 1
    for v in range(inst.n_systems):
        for a in range(v + 1, inst.n_systems):
            yield v, a, int(inst.window[v, a]), int(inst.window[a, v]), full


def product_count(inst: PlanningInstance) -> int:
    """How many pair booleans the objective group would create (checked before building)."""
    total = 0
    cum = np.concatenate([np.zeros((inst.n_systems, 1), int), np.cumsum(inst.allowed | inst.pinned, axis=1)], axis=1)
    idx = np.arange(inst.n_channels)
    for v, a, wva, wav, full in _harm_pairs(inst):
        w = max(wva if wva < full else -1, wav if wav < full else -1)
        if w < 0:
            continue
        lo, hi = np.clip(idx - w, 0, inst.n_channels), np.clip(idx + w + 1, 0, inst.n_channels)
        total += int(((cum[a, hi] - cum[a, lo]) * (inst.allowed[v] | inst.pinned[v])).sum())
    return total


@dataclass
class Costs:
    """Linearised cost per term, in probability units: objective weights and per-victim parts."""

    node: dict[tuple[int, int], tuple[float, float]] = field(default_factory=dict)  # (v, c) -> (weighted, own)
    pair: list[tuple[int, float, float, float]] = field(default_factory=list)  # (z index, weighted, to v, to a)


class Objective:
    """Pair booleans and the costs of the linearised objective (no constraint of its own)."""

    name = "objective"

    def __init__(self):
        self.costs = Costs()

    def add(self, m, mv, inst, enforce) -> None:
        coef = inst.pair_coef()
        node = inst.node_coef()
        wts = inst.weights
        for (v, c) in mv.x:
            self.costs.node[v, c] = (wts[v] * node[v, c], node[v, c])
        for v, a, wva, wav, full in _harm_pairs(inst):
            # pairs harmed at every offset: N_v N_a conflicting channel pairs whatever the plan
            to_v = coef[v, a] if wva >= 0 else 0.0
            to_a = coef[a, v] if wav >= 0 else 0.0
            n_pairs = float(inst.sizes[v] * inst.sizes[a])
            if wva >= full:
                mv.constant += wts[v] * to_v * n_pairs
            if wav >= full:
                mv.constant += wts[a] * to_a * n_pairs
            wva_eff = wva if wva < full else -1
            wav_eff = wav if wav < full else -1
            w = max(wva_eff, wav_eff)
            if w < 0:
                continue
            for c in range(inst.n_channels):
                if (v, c) not in mv.x:
                    continue
                for k in range(max(0, c - w), min(inst.n_channels, c + w + 1)):
                    if (a, k) not in mv.x:
                        continue
                    d = abs(c - k)
                    cv = to_v if d <= wva_eff else 0.0
                    ca = to_a if d <= wav_eff else 0.0
                    if cv == 0.0 and ca == 0.0:
                        continue
                    z = m.new_bool_var("")
                    m.add_bool_or([mv.x[v, c].Not(), mv.x[a, k].Not(), z])
                    mv.z.append((z, v, c, a, k))
                    self.costs.pair.append((len(mv.z) - 1, wts[v] * cv + wts[a] * ca, cv, ca))


class Ceilings:
    """Linearised per-hop collision at most the ceiling implied by a loss ceiling (needs Objective)."""

    name = "loss ceiling"

    def __init__(self, objective: Objective, scale: Scale):
        self.objective, self.scale = objective, scale

    def add(self, m, mv, inst, enforce) -> None:
        terms: dict[int, list] = {v: [] for v in range(inst.n_systems)}
        for (v, c), (_, own) in self.objective.costs.node.items():
            terms[v].append((self.scale(own), mv.x[v, c]))
        for zi, _, cv, ca in self.objective.costs.pair:
            z, v, _, a, _ = mv.z[zi]
            terms[v].append((self.scale(cv), z))
            terms[a].append((self.scale(ca), z))
        for v in range(inst.n_systems):
            if not math.isfinite(inst.ceilings[v]):
                continue
            lit = enforce("ceiling", (v,))
            limit = int(math.floor(inst.ceilings[v] * self.scale.factor))
            ct = m.add(sum(k * var for k, var in terms[v] if k) <= limit)
            if lit is not None:
                ct.only_enforce_if(lit)


def weighted_sum(mv: ModelVars, objective: Objective, scale: Scale):
    """The scaled weighted-sum objective (without the plan-independent constant)."""
    costs = objective.costs
    expr = sum(scale(wc) * mv.x[v, c] for (v, c), (wc, _) in costs.node.items() if scale(wc))
    return expr + sum(scale(wc) * mv.z[zi][0] for zi, wc, _, _ in costs.pair if scale(wc))


def full_model(inst: PlanningInstance, start: np.ndarray | None = None):
    """Every hard requirement and the objective's pair booleans, with the integer scale of the costs and the
    loss ceilings; the caller sets what to minimise. Returns (model, vars, objective group, scale)."""
    objective = Objective()
    m, mv = build(inst, [ChannelVariables(), ChannelCounts(), Pins(), Separation(), Guards(), objective])
    c = objective.costs
    costs = [w for pair in c.node.values() for w in pair] + [w for _, wc, cv, ca in c.pair for w in (wc, cv, ca)]
    scale = Scale.choose(np.array(costs))
    Ceilings(objective, scale).add(m, mv, inst, lambda kind, key: None)
    if start is not None:
        hint(m, mv, start)
    return m, mv, objective, scale


def minimise(m: cp_model.CpModel, mv: ModelVars, inst: PlanningInstance, objective: Objective, scale: Scale):
    """Set the objective: weighted sum, or the worst system's estimate (unweighted)."""
    costs = objective.costs
    if inst.req.objective == "worst_system":
        per_victim: dict[int, list] = {v: [] for v in range(inst.n_systems)}
        for (v, c), (_, own) in costs.node.items():
            per_victim[v].append(scale(own) * mv.x[v, c])
        for zi, _, cv, ca in costs.pair:
            z, v, _, a, _ = mv.z[zi]
            per_victim[v].append(scale(cv) * z)
            per_victim[a].append(scale(ca) * z)
        worst = m.new_int_var(0, 2**62, "worst")
        for v, terms in per_victim.items():
            m.add(worst >= sum(terms) + scale(_constant_of(inst, v)))
        m.minimize(worst)
        return worst
    expr = weighted_sum(mv, objective, scale)
    m.minimize(expr)
    return expr


def _constant_of(inst: PlanningInstance, v: int) -> float:
    """Victim v's share of the plan-independent cost (pairs harmed at every offset), unweighted."""
    full = inst.n_channels - 1
    coef = inst.pair_coef()
    return float(sum(coef[v, a] * inst.sizes[v] * inst.sizes[a] for a in range(inst.n_systems)
                     if a != v and inst.window[v, a] >= full))


def build(inst: PlanningInstance, groups: list, enforce: Enforce | None = None,
          model: cp_model.CpModel | None = None) -> tuple[cp_model.CpModel, ModelVars]:
    """A model of the given constraint groups, each added in turn (the plan's full model, the diagnosis)."""
    m = model if model is not None else cp_model.CpModel()
    mv = ModelVars()
    for g in groups:
        g.add(m, mv, inst, enforce or (lambda kind, key: None))
    return m, mv


def hint(m: cp_model.CpModel, mv: ModelVars, x: np.ndarray) -> None:
    for (v, c), var in mv.x.items():
        m.add_hint(var, bool(x[v, c]))
    for z, v, c, a, k in mv.z:
        m.add_hint(z, bool(x[v, c] and x[a, k]))


def solution(solver: cp_model.CpSolver, mv: ModelVars, shape) -> np.ndarray:
    x = np.zeros(shape, dtype=bool)
    for (v, c), var in mv.x.items():
        x[v, c] = bool(solver.value(var))
    return x
