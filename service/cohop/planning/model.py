"""The CP-SAT model, assembled from named constraint groups.

Variables: x[v, c] (system v hops on channel c) for the channels v may use.
Each group adds its constraints and, for the infeasibility diagnosis, ties
them to one enforcement literal per requirement instance (per system, per
interferer exclusion, per guarded pair) so that CP-SAT assumptions can name
the requirements that conflict. The objective group adds one boolean per
pair of channels (v on c, a on c') at an offset where either system's harm
varies (`inst.window`), z >= x[v, c] + x[a, c'] - 1, with the pair's
linearised cost pair_coef x offset_harm at that offset (`linear.pair_costs`);
the constant part of the harm (`inst.constant_harm`, paid on every pair of
channel uses) costs the same whatever the channels and enters as a constant.

Real-valued costs are scaled to integers by `Scale` (a power of ten chosen
so the smallest cost keeps at least four significant digits); the relative
rounding error is reported with the plan. `rounding_allowance` bounds how far
that rounding can raise the objective of any plan (each term's exact excess,
over the terms a plan can switch on at once), so that CP-SAT's bound less it
stays a bound on the real objective; it is zero when every scaled cost is an
integer.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, NamedTuple

import numpy as np
from ortools.sat.python import cp_model

from cohop.planning.instance import PlanningInstance
from cohop.planning.linear import constant_costs, pair_costs

Enforce = Callable[[str, tuple], "cp_model.IntVar | None"]


class PairVar(NamedTuple):
    """The boolean that is 1 when victim-side system v uses channel c and system a uses channel c2."""

    var: cp_model.IntVar
    v: int
    c: int
    a: int
    c2: int


class PairCost(NamedTuple):
    """The linearised cost of pair boolean `index` (into ModelVars.z): weighted for the objective, and the
    unweighted parts it adds to v's and to a's per-hop estimate."""

    index: int
    weighted: float
    to_victim: float
    to_source: float


@dataclass
class ModelVars:
    x: dict[tuple[int, int], cp_model.IntVar] = field(default_factory=dict)
    z: list[PairVar] = field(default_factory=list)
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

    def excess(self, value: float) -> float:
        """How far rounding raised `value` in scaled units: max(0, self(value) - value x factor), the product
        taken exactly (rational arithmetic on the two floats), so zero when it is an integer."""
        vn, vd = float(value).as_integer_ratio()
        fn, fd = float(self.factor).as_integer_ratio()
        num = self(value) * vd * fd - vn * fn
        return math.nextafter(num / (vd * fd), math.inf) if num > 0 else 0.0


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
    """Unordered system pairs (v, a) whose harm varies with the offset, with the largest such offset of either."""
    for v in range(inst.n_systems):
        for a in range(v + 1, inst.n_systems):
            w = int(max(inst.window[v, a], inst.window[a, v]))
            if w >= 0:
                yield v, a, w


def product_count(inst: PlanningInstance) -> int:
    """How many pair booleans the objective group would create (checked before building)."""
    total = 0
    cum = np.concatenate([np.zeros((inst.n_systems, 1), int), np.cumsum(inst.allowed | inst.pinned, axis=1)], axis=1)
    idx = np.arange(inst.n_channels)
    for v, a, w in _harm_pairs(inst):
        lo, hi = np.clip(idx - w, 0, inst.n_channels), np.clip(idx + w + 1, 0, inst.n_channels)
        total += int(((cum[a, hi] - cum[a, lo]) * (inst.allowed[v] | inst.pinned[v])).sum())
    return total


@dataclass
class Costs:
    """Linearised cost per term, in probability units: objective weights and per-victim parts."""

    node: dict[tuple[int, int], tuple[float, float]] = field(default_factory=dict)  # (v, c) -> (weighted, own)
    pair: list[PairCost] = field(default_factory=list)


class Objective:
    """Pair booleans and the costs of the linearised objective (no constraint of its own)."""

    name = "objective"

    def __init__(self):
        self.costs = Costs()

    def add(self, m, mv, inst, enforce) -> None:
        node = inst.node_coef()
        wts = inst.weights
        for (v, c) in mv.x:
            self.costs.node[v, c] = (wts[v] * node[v, c], node[v, c])
        mv.constant += float(wts @ constant_costs(inst))  # the constant part of the harm, whatever the plan
        unit = pair_costs(inst)  # [v, a, d]: to victim v per pair at offset d
        for v, a, w in _harm_pairs(inst):
            for c in range(inst.n_channels):
                if (v, c) not in mv.x:
                    continue
                for k in range(max(0, c - w), min(inst.n_channels, c + w + 1)):
                    if (a, k) not in mv.x:
                        continue
                    cv, ca = float(unit[v, a, abs(c - k)]), float(unit[a, v, abs(c - k)])
                    if cv == 0.0 and ca == 0.0:
                        continue
                    z = m.new_bool_var("")
                    m.add_bool_or([mv.x[v, c].Not(), mv.x[a, k].Not(), z])
                    mv.z.append(PairVar(z, v, c, a, k))
                    self.costs.pair.append(PairCost(len(mv.z) - 1, wts[v] * cv + wts[a] * ca, cv, ca))


class Ceilings:
    """Linearised per-hop collision at most the ceiling implied by a loss ceiling (needs Objective)."""

    name = "loss ceiling"

    def __init__(self, objective: Objective, scale: Scale):
        self.objective, self.scale = objective, scale

    def add(self, m, mv, inst, enforce) -> None:
        if not np.isfinite(inst.ceilings).any():
            return
        _, excess = rounding_excess(self.objective, mv, inst, self.scale)
        terms: dict[int, list] = {v: [] for v in range(inst.n_systems)}
        for (v, c), (_, own) in self.objective.costs.node.items():
            terms[v].append((self.scale(own), mv.x[v, c]))
        for cost in self.objective.costs.pair:
            pair = mv.z[cost.index]
            terms[pair.v].append((self.scale(cost.to_victim), pair.var))
            terms[pair.a].append((self.scale(cost.to_source), pair.var))
        for v in range(inst.n_systems):
            if not math.isfinite(inst.ceilings[v]):
                continue
            lit = enforce("ceiling", (v,))
            # less v's constant part (no channel changes it), widened by v's rounding excess: no plan within the
            # real ceiling is cut off by rounding
            limit = int(math.floor((inst.ceilings[v] - _constant_of(inst, v)) * self.scale.factor + excess[v]))
            ct = m.add(sum(k * var for k, var in terms[v] if k) <= limit)
            if lit is not None:
                ct.only_enforce_if(lit)


def _top(values: list[float], count: int) -> float:
    return math.fsum(sorted(values, reverse=True)[:max(0, int(count))])


def _active_pairs(inst: PlanningInstance, v: int, a: int, span: int) -> int:
    """Most pair booleans of systems v and a on at once: each of v's N_v channels meets at most
    min(2 span + 1, N_a) of a's within `span` channels, and the other way round."""
    nv, na = int(inst.sizes[v]), int(inst.sizes[a])
    return min(nv * min(2 * span + 1, na), na * min(2 * span + 1, nv))


def rounding_excess(objective: Objective, mv: ModelVars, inst: PlanningInstance, scale: Scale):
    """(weighted, per_victim): the most by which rounding the costs to integers raises the scaled objective of
    any plan above its real value times `scale.factor`, for the weighted sum and for each victim's own
    unweighted share (worst-system objective, loss ceilings). Terms rounded down only lower it, so only the
    exact excess of terms rounded up counts (`Scale.excess`), and only as many of them as a plan can switch on
    at once: N_v channel terms per system, and per pair of systems the pair booleans their counts allow."""
    memo: dict[float, float] = {}

    def up(value: float) -> float:
        if value not in memo:
            memo[value] = scale.excess(value)
        return memo[value]

    n = inst.n_systems
    node_w: list[list[float]] = [[] for _ in range(n)]
    node_own: list[list[float]] = [[] for _ in range(n)]
    for (v, _), (wc, own) in objective.costs.node.items():
        node_w[v].append(up(wc))
        node_own[v].append(up(own))
    groups: dict[tuple[int, int], tuple[list, list, list, list]] = {}
    for cost in objective.costs.pair:
        pair = mv.z[cost.index]
        w, to_v, to_a, span = groups.setdefault((pair.v, pair.a), ([], [], [], [0]))
        w.append(up(cost.weighted))
        to_v.append(up(cost.to_victim))
        to_a.append(up(cost.to_source))
        span[0] = max(span[0], abs(pair.c - pair.c2))
    parts = [_top(node_w[v], inst.sizes[v]) for v in range(n)]
    per_victim = [[_top(node_own[v], inst.sizes[v])] for v in range(n)]
    for (v, a), (w, to_v, to_a, span) in groups.items():
        most = _active_pairs(inst, v, a, span[0])
        parts.append(_top(w, most))
        per_victim[v].append(_top(to_v, most))
        per_victim[a].append(_top(to_a, most))
    return math.fsum(parts), np.array([math.fsum(p) for p in per_victim])


def rounding_allowance(objective: Objective, mv: ModelVars, inst: PlanningInstance, scale: Scale) -> float:
    """What to subtract from CP-SAT's bound (divided by the scale) so that it bounds the real objective: the
    weighted sum's rounding excess, or for the worst system the largest victim's excess with its constant's."""
    weighted, per_victim = rounding_excess(objective, mv, inst, scale)
    if inst.req.objective == "worst_system":
        own = [per_victim[v] + scale.excess(_constant_of(inst, v)) for v in range(inst.n_systems)]
        return max(own, default=0.0) / scale.factor
    return weighted / scale.factor


def weighted_sum(mv: ModelVars, objective: Objective, scale: Scale):
    """The scaled weighted-sum objective (without the plan-independent constant)."""
    costs = objective.costs
    expr = sum(scale(wc) * mv.x[v, c] for (v, c), (wc, _) in costs.node.items() if scale(wc))
    return expr + sum(scale(cost.weighted) * mv.z[cost.index].var for cost in costs.pair if scale(cost.weighted))


def full_model(inst: PlanningInstance, start: np.ndarray | None = None):
    """Every hard requirement and the objective's pair booleans, with the integer scale of the costs and the
    loss ceilings; the caller sets what to minimise. Returns (model, vars, objective group, scale)."""
    objective = Objective()
    m, mv = build(inst, [ChannelVariables(), ChannelCounts(), Pins(), Separation(), Guards(), objective])
    c = objective.costs
    costs = [w for pair in c.node.values() for w in pair] + [w for cost in c.pair for w in cost[1:]]
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
        for cost in costs.pair:
            pair = mv.z[cost.index]
            per_victim[pair.v].append(scale(cost.to_victim) * pair.var)
            per_victim[pair.a].append(scale(cost.to_source) * pair.var)
        worst = m.new_int_var(0, 2**62 - 1, "worst")  # CP-SAT domains lie within +-(2^63 - 1) / 2
        for v, terms in per_victim.items():
            m.add(worst >= sum(terms) + scale(_constant_of(inst, v)))
        m.minimize(worst)
        return worst
    expr = weighted_sum(mv, objective, scale)
    m.minimize(expr)
    return expr


def _constant_of(inst: PlanningInstance, v: int) -> float:
    """Victim v's share of the plan-independent cost (the constant part of its harm), unweighted."""
    return float(constant_costs(inst)[v])


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
    for pair in mv.z:
        m.add_hint(pair.var, bool(x[pair.v, pair.c] and x[pair.a, pair.c2]))


def solution(solver: cp_model.CpSolver, mv: ModelVars, shape) -> np.ndarray:
    x = np.zeros(shape, dtype=bool)
    for (v, c), var in mv.x.items():
        x[v, c] = bool(solver.value(var))
    return x
