"""A proven lower bound on the linearised objective by column generation.

Relaxation ("sliding-window patterns"). Cut the band into the C + L - 1
windows of L consecutive channels (padding the edges with unusable virtual
channels). A *pattern* says which systems use each of a window's L channels.
Every pair of channel uses at offset d < L lies in L - d windows, so giving
it weight 1 / (L - d) in each (and each channel's own cost weight 1 / L)
makes the sum over the windows of a plan exactly its linearised objective,
less the pairs at offsets >= L. Forgetting that neighbouring windows must
agree on the channels they share leaves a linear program over pattern counts:

    min  sum cost(p) n_p
    s.t. sum_{p in class P} n_p = m_P          (windows of each kind)
         sum_p uses_v(p) n_p = L N_v           (each channel lies in L windows)

whose optimum is at most the best plan's objective. Part of the agreement
is kept: for each channel type and system, windows must hold the system at
offset i as often as at offset i + 1 (both count the same channels), which
every plan satisfies. Windows whose channels look the same to every system
(same allowed systems, pins, interferer costs) form one class, so the LP
stays small; it is solved with GLOP, and columns are priced per class by a
small quadratic 0-1 problem over (offset, system) booleans (`_Pricing`:
enumeration, a flip heuristic, or branch and bound; CP-SAT was tried for it
and was far slower on these tiny dense problems). At any iteration the
Lagrangian bound
    z_LP + sum_P m_P min_p reduced_cost(p)
is valid when every class was priced exactly, so the bound is reported even
if the loop stops early. With L = 1 this is the aggregated model with one
count per subset of systems (Dantzig-Wolfe on channels). A pair of channel
uses at offset d costs pair_coef x offset_harm[d] (`linear.pair_costs`); the
constant part of the harm (`inst.constant_harm`) is paid whatever the plan
and added as a constant.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from ortools.linear_solver import pywraplp

from cohop.planning import pricing_kernels
from cohop.planning.instance import PlanningInstance
from cohop.planning.linear import constant_costs, pair_costs

Pattern = tuple[frozenset, ...]


@dataclass
class BoundResult:
    bound: float  # proven lower bound on the linearised objective
    window: int  # L
    iterations: int
    columns: int
    converged: bool
    work: float = 0.0  # pricing operations spent (the deterministic work count)
    #: The master LP's last duals of the use rows, per channel use (L times the per-window dual): the value of
    #: one more channel of each system, the channel-count multipliers `planning.lagrange` starts from.
    multipliers: np.ndarray | None = None
    #: Worst-system objective: the LP's duals of the victim rows (weights on the systems, summing to 1).
    victim_weights: np.ndarray | None = None
    #: Every (window class, pattern) column the LP held: a later call on the same instance and window length
    #: starts from them (`lower_bound(columns=...)`) and so continues where this one stopped.
    pool: tuple = ()


def _channel_types(inst: PlanningInstance) -> list[tuple]:
    allowed = inst.allowed | inst.pinned
    node = np.round(inst.interferer_cost, 12)
    return [(tuple(allowed[:, c]), tuple(inst.pinned[:, c]), tuple(node[:, c])) for c in range(inst.n_channels)]


class _Classes:
    def __init__(self, inst: PlanningInstance, length: int):
        types = _channel_types(inst)
        type_id: dict[tuple, int] = {}
        ids = [type_id.setdefault(t, len(type_id)) for t in types]
        self.type_channel = {i: c for c, i in reversed(list(enumerate(ids)))}  # a representative channel
        self.key_of_position: list[tuple] = []
        for p in range(-(length - 1), inst.n_channels):
            self.key_of_position.append(tuple(ids[c] if 0 <= c < inst.n_channels else -1
                                              for c in range(p, p + length)))
        self.counts: dict[tuple, int] = {}
        for key in self.key_of_position:
            self.counts[key] = self.counts.get(key, 0) + 1


class _Costs:
    """Pattern costs: weighted (sum mode) or per victim (worst mode)."""

    def __init__(self, inst: PlanningInstance, length: int):
        self.inst, self.length = inst, length
        omega = 1.0 / (length - np.arange(length))  # a pair at offset d lies in L - d windows
        #: [d, v, a]: to victim v per pair of channel uses at offset d < L, in one window
        self.unit = np.moveaxis(pair_costs(inst, length), 2, 0) * omega[:, None, None]
        self.node = inst.node_coef()

    def pair(self, d: int, v: int, a: int) -> float:
        """What one pair (v, a) at offset d in a window costs victim v (0 beyond its varying harm)."""
        return float(self.unit[d, v, a])

    def per_victim(self, pattern: Pattern, key: tuple, classes: _Classes) -> np.ndarray:
        inst = self.inst
        on = np.zeros((self.length, inst.n_systems))
        for i, members in enumerate(pattern):
            on[i, list(members)] = 1.0
        out = np.zeros(inst.n_systems)
        for i in range(self.length):
            if key[i] >= 0:
                out += on[i] * self.node[:, classes.type_channel[key[i]]] / self.length
        for d in range(self.length):
            lo, hi = on[:self.length - d], on[d:]  # positions i and i + d
            out += (lo * (hi @ self.unit[d].T)).sum(axis=0)
            if d:
                out += (hi * (lo @ self.unit[d].T)).sum(axis=0)
        return out

    def constant_per_victim(self) -> np.ndarray:
        return constant_costs(self.inst)


def _uses(pattern: Pattern, n_systems: int) -> np.ndarray:
    u = np.zeros(n_systems)
    for members in pattern:
        for v in members:
            u[v] += 1
    return u


def _plan_patterns(x: np.ndarray, length: int) -> list[Pattern]:
    s, c = x.shape
    out = []
    for p in range(-(length - 1), c):
        out.append(tuple(frozenset(np.flatnonzero(x[:, k]).tolist()) if 0 <= k < c else frozenset()
                         for k in range(p, p + length)))
    return out


class _Pricing:
    """The pricing problem of one class: a small quadratic 0-1 problem over (offset, system) pairs.

    Structure is built once; each iteration only re-weights it. Up to
    `ENUMERATE` free booleans it is solved exactly by enumeration; above,
    by a deterministic greedy-and-flip heuristic, and by branch and bound
    when the heuristic finds nothing (so the final bound rests on exact
    pricing, or on the root bound if the node limit is reached).
    """

    ENUMERATE = 14
    NODE_LIMIT = 200_000
    STOP_CHECK = 1024

    def __init__(self, inst: PlanningInstance, costs: _Costs, classes: _Classes, key: tuple):
        length = costs.length
        self.length = length
        self.vars: list[tuple[int, int]] = []
        self.types: list[int] = []
        node, forced = [], []
        for i in range(length):
            if key[i] < 0:
                continue
            c = classes.type_channel[key[i]]
            for v in range(inst.n_systems):
                if inst.allowed[v, c] or inst.pinned[v, c]:
                    self.vars.append((i, v))
                    self.types.append(key[i])
                    node.append(costs.node[v, c] / length)
                    forced.append(bool(inst.pinned[v, c]))
        n = len(self.vars)
        self.sys = np.array([v for _, v in self.vars], dtype=int)
        self.node = np.array(node)
        self.forced = np.array(forced, dtype=bool)
        self.forbidden = np.zeros((n, n), dtype=bool)
        pairs = []  # (k1, k2, cost to k1's system, cost to k2's system)
        guard = {(min(g, h), max(g, h)): w for g, h, w in inst.guards}
        for k1, (i, v) in enumerate(self.vars):
            for k2 in range(k1 + 1, n):
                j, a = self.vars[k2]
                d = abs(j - i)
                if a == v:
                    if d < inst.separation[v]:
                        self.forbidden[k1, k2] = self.forbidden[k2, k1] = True
                    continue
                if guard.get((min(v, a), max(v, a)), -1) >= d:
                    self.forbidden[k1, k2] = self.forbidden[k2, k1] = True
                to_v, to_a = costs.pair(d, v, a), costs.pair(d, a, v)
                if to_v or to_a:
                    pairs.append((k1, k2, to_v, to_a))
        self.pairs = np.array(pairs, dtype=float).reshape(-1, 4)
        self._grid = None
        self.work = 0  # elementary operations spent, a deterministic stand-in for time

    def consistency_terms(self, rho: dict) -> np.ndarray:
        """Linear adjustment from the duals rho[(type, v, i)] of the rows saying that channels of a type
        hold system v as often at offset i as at offset i + 1."""
        out = np.zeros(len(self.vars))
        for k, ((j, v), t) in enumerate(zip(self.vars, self.types)):
            if j <= self.length - 2:
                out[k] -= rho.get((t, v, j), 0.0)
            if j >= 1:
                out[k] += rho.get((t, v, j - 1), 0.0)
        return out

    def _weighted(self, weight: np.ndarray, pi: np.ndarray, adjust: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        n = len(self.vars)
        b = weight[self.sys] * self.node - pi[self.sys] + adjust
        q = np.zeros((n, n))
        if self.pairs.size:
            k1, k2 = self.pairs[:, 0].astype(int), self.pairs[:, 1].astype(int)
            val = weight[self.sys[k1]] * self.pairs[:, 2] + weight[self.sys[k2]] * self.pairs[:, 3]
            np.add.at(q, (k1, k2), val)
            q = q + q.T
        return b, q

    def _value(self, y: np.ndarray, b: np.ndarray, q: np.ndarray) -> float:
        return float(b @ y + 0.5 * y @ q @ y)

    def _all_patterns(self) -> tuple[np.ndarray, np.ndarray]:
        if self._grid is None:
            free = np.flatnonzero(~self.forced)
            grid = ((np.arange(2**free.size)[:, None] >> np.arange(free.size)[None, :]) & 1).astype(float)
            y = np.zeros((grid.shape[0], len(self.vars)))
            y[:, self.forced] = 1.0
            y[:, free] = grid
            bad = ((y @ self.forbidden.astype(float)) * y).sum(axis=1) > 0
            self._grid = (y[~bad], None)
        return self._grid[0], None

    def _enumerate(self, b, q, keep: int) -> list[tuple[float, np.ndarray]]:
        y, _ = self._all_patterns()
        self.work += y.size * (y.shape[1] + 2)
        values = y @ b + 0.5 * ((y @ q) * y).sum(axis=1)
        keep = min(keep, values.size)
        best = np.argpartition(values, keep - 1)[:keep]
        best = best[np.argsort(values[best], kind="stable")]
        return [(float(values[i]), y[i]) for i in best]

    def _heuristic(self, b, q) -> list[tuple[float, np.ndarray]]:
        """Distinct local optima of single flips from several starts, best first (`pricing_kernels.flip_descent`)."""
        optima: dict[bytes, tuple[float, np.ndarray]] = {}
        forbidden = np.ascontiguousarray(self.forbidden)
        for seed in [-1] + [int(k) for k in np.argsort(b, kind="stable")[:6]]:
            y = self.forced.astype(float)
            if seed >= 0:
                if y[seed] or (self.forbidden[seed] @ y) > 0:
                    continue
                y[seed] = 1.0
            steps = pricing_kernels.flip_descent(y, b, q, forbidden, self.forced)
            self.work += 4 * y.size * y.size * steps
            optima.setdefault(y.tobytes(), (self._value(y, b, q), y.copy()))
        return sorted(optima.values(), key=lambda t: t[0])

    def _branch_and_bound(self, b, q, incumbent: float, node_limit: int,
                          stop=None) -> tuple[float, float, np.ndarray]:
        """(proven lower bound, best value, best y). All pair costs are >= 0, so a boolean with
        b >= 0 never helps and stays 0, and the marginals of the remaining ones, summed where
        negative, bound any completion from below (`pricing_kernels.branch_and_bound`). Past `node_limit`
        nodes, or when `stop()` (the wall clock, asked every STOP_CHECK nodes) says so, the search ends and the
        root's bound is the proven one."""
        forbid = self.forbidden.astype(np.int32)
        chosen = self.forced.astype(float)
        blocked = forbid @ chosen.astype(np.int32)
        base = self._value(chosen, b, q)
        marg = b + q @ chosen
        order = np.argsort(marg, kind="stable")
        cand = np.array([k for k in order if not self.forced[k] and marg[k] < 0 and blocked[k] == 0], dtype=np.int64)
        root = base + float(np.minimum(marg[cand], 0.0).sum())
        state, m_stack, blocked_stack = pricing_kernels.new_search_state(cand.size, marg, blocked, base, incumbent)
        best_y = np.zeros_like(chosen)
        q = np.ascontiguousarray(q)
        cut_short = False
        while True:
            pricing_kernels.branch_and_bound(cand, q, forbid, chosen, node_limit, self.STOP_CHECK, state, m_stack,
                                             blocked_stack, best_y)
            if state[0] == 0:
                break
            if stop is not None and stop():
                cut_short = True
                break
        self.work += int(state[2])
        best_val = float(state[4])
        y = best_y if state[3] == 1.0 else None
        if cut_short or state[1] > node_limit:
            return root, best_val, y
        return best_val, best_val, y

    def pattern(self, y: np.ndarray) -> Pattern:
        return tuple(frozenset(v for (i, v), on in zip(self.vars, y) if on and i == pos) for pos in range(self.length))

    def solve(self, weight, pi, sigma, rho, exact: bool, keep: int = 4,
              stop=None) -> tuple[float, list[tuple[float, Pattern]]]:
        """(lower bound on the least reduced cost, up to `keep` patterns found with their reduced costs).

        The lower bound is -inf when the pricing was not exact. An exact pricing's branch and bound stops at
        NODE_LIMIT nodes or at `stop()` (the wall clock); then its bound is the root's (still valid)."""
        if not self.vars:
            empty = tuple(frozenset() for _ in range(self.length))
            return -sigma, [(-sigma, empty)]
        b, q = self._weighted(weight, pi, self.consistency_terms(rho))
        if (~self.forced).sum() <= self.ENUMERATE:
            found = self._enumerate(b, q, keep)
            return found[0][0] - sigma, [(v - sigma, self.pattern(y)) for v, y in found]
        found = self._heuristic(b, q)[:keep]
        lower = -math.inf
        if exact:
            lower, value, y = self._branch_and_bound(b, q, found[0][0], self.NODE_LIMIT, stop)
            if y is not None and value < found[0][0]:
                found.insert(0, (value, y))
            lower -= sigma
        return lower, [(v - sigma, self.pattern(y)) for v, y in found]


def window_length(inst: PlanningInstance, max_booleans: int = 40, cap: int = 3) -> int:
    """L: one more than the widest offset where some harm varies, within `cap` and `max_booleans` per pattern."""
    widest = max(int(inst.window.max(initial=-1)), 0)
    length = min(widest + 1, cap, max(1, max_booleans // max(1, inst.n_systems)))
    return max(1, length)


#: Pricing operations per calibrated second, to turn a time budget into a deterministic work budget. With the
#: compiled pricing (`pricing_kernels`) the column generation does 3.1, 4.9 and 5.4 x 10^8 per wall second on
#: the sample, small and medium sites (master LPs included) on a machine where the local search runs at 2.9 to
#: 4 x its calibration; the figure keeps the column generation's wall time per calibrated second at or below
#: the local search's there (the Python pricing did 0.6 to 2.9 x 10^8 at 5 x 10^7).
WORK_PER_SECOND = 1e8


def floor_bound(inst: PlanningInstance) -> float:
    """A bound every plan meets, without search: each system pays at least its N_v cheapest channels' own cost
    (fixed interferers; pins and separation can only raise it) and the constant part of the harm on all
    N_v N_a pairs of channel uses (`linear.constant_costs`; what the channels change is >= 0 on top of it).
    The column generation never reports less: where its pricing is stopped before it proves anything (large
    sites on a slow machine) this is the bound, not 0."""
    node = np.where(inst.allowed | inst.pinned, inst.node_coef(), np.inf)
    own = np.array([np.sort(node[v])[:int(inst.sizes[v])].sum() for v in range(inst.n_systems)])
    per_system = own + constant_costs(inst)
    if not np.all(np.isfinite(per_system)):  # fewer usable channels than the count: nothing to say here
        return 0.0
    value = float(per_system.max()) if inst.req.objective == "worst_system" else float(inst.weights @ per_system)
    return max(value, 0.0)


def lower_bound(inst: PlanningInstance, start: np.ndarray, length: int | None = None, iterations: int = 40,
                seconds: float | None = None, deadline=None, columns: tuple = ()) -> BoundResult:
    """Column generation from the patterns of a feasible plan `start` (and `columns`: the `pool` of an earlier
    call on the same instance and window length, which this one continues).

    It stops at convergence, after `iterations`, or when its pricing work exceeds `seconds` worth of
    WORK_PER_SECOND (a count, so runs repeat exactly); a last exact pricing then gives a valid bound.
    `deadline()`, the wall clock's stop, can end it too (then runs may differ).
    """
    length = length or window_length(inst)
    classes = _Classes(inst, length)
    costs = _Costs(inst, length)
    worst = inst.req.objective == "worst_system"
    s = inst.n_systems
    lp = pywraplp.Solver.CreateSolver("GLOP")
    keys = list(classes.counts)
    class_row = {k: lp.Constraint(classes.counts[k], classes.counts[k]) for k in keys}
    use_row = [lp.Constraint(float(length * inst.sizes[v]), float(length * inst.sizes[v])) for v in range(s)]
    constant = costs.constant_per_victim()
    objective = lp.Objective()
    objective.SetMinimization()
    if worst:
        t = lp.NumVar(0.0, lp.infinity(), "t")
        objective.SetCoefficient(t, 1.0)
        victim_row = [lp.Constraint(float(constant[v]), lp.infinity()) for v in range(s)]
        for v in range(s):
            victim_row[v].SetCoefficient(t, 1.0)
    consistency = {}  # (type, v, i): offset i and i + 1 of windows hold v on channels of a type equally often
    for key in keys:
        for i in range(length - 1):
            for t in (key[i], key[i + 1]):
                if t >= 0:
                    c = classes.type_channel[t]
                    for v in np.flatnonzero(inst.allowed[:, c] | inst.pinned[:, c]):
                        if (t, int(v), i) not in consistency:
                            consistency[t, int(v), i] = lp.Constraint(0.0, 0.0)
    seen: dict[tuple, None] = {}  # insertion-ordered, so a continued call adds the columns in the same order

    def add_column(key, pattern):
        if (key, pattern) in seen:
            return False
        seen[key, pattern] = None
        var = lp.NumVar(0.0, lp.infinity(), "")
        class_row[key].SetCoefficient(var, 1.0)
        for v, u in enumerate(_uses(pattern, s)):
            if u:
                use_row[v].SetCoefficient(var, float(u))
        for i in range(length - 1):
            for v in pattern[i]:
                if key[i] >= 0:
                    row = consistency[key[i], v, i]
                    row.SetCoefficient(var, row.GetCoefficient(var) + 1.0)
            for v in pattern[i + 1]:
                if key[i + 1] >= 0:
                    row = consistency[key[i + 1], v, i]
                    row.SetCoefficient(var, row.GetCoefficient(var) - 1.0)
        per_victim = costs.per_victim(pattern, key, classes)
        if worst:
            for v in range(s):
                if per_victim[v]:
                    victim_row[v].SetCoefficient(var, -float(per_victim[v]))
        else:
            objective.SetCoefficient(var, float(inst.weights @ per_victim))
        return True

    for key, pattern in zip(classes.key_of_position, _plan_patterns(start, length)):
        add_column(key, pattern)
    for key, pattern in columns:
        if key in class_row:
            add_column(key, pattern)
    pricers = {key: _Pricing(inst, costs, classes, key) for key in keys}
    best = -math.inf
    value = -math.inf
    converged = False
    it = 0

    def price(exact: bool):
        """Columns with negative reduced cost, and the Lagrangian bound (-inf unless exact)."""
        pi = np.array([row.dual_value() for row in use_row])
        weight = np.array([row.dual_value() for row in victim_row]) if worst else inst.weights
        sigmas = {key: class_row[key].dual_value() for key in keys}  # read every dual before adding columns
        rho = {k: row.dual_value() for k, row in consistency.items()}
        found, lagrange = [], value
        for key in keys:
            lower, patterns = pricers[key].solve(weight, pi, sigmas[key], rho, exact, stop=deadline)
            lagrange += classes.counts[key] * lower
            found += [(key, p) for rc, p in patterns if rc < -1e-12 * max(1.0, abs(value))]
        return found, lagrange

    budget = math.inf if seconds is None else seconds * WORK_PER_SECOND

    def spent() -> float:
        return float(sum(p.work for p in pricers.values()))

    multipliers = victim_weights = None
    for it in range(1, iterations + 1):
        if lp.Solve() != pywraplp.Solver.OPTIMAL:
            break
        value = objective.Value() + (0.0 if worst else float(inst.weights @ constant))
        multipliers = length * np.array([row.dual_value() for row in use_row])
        victim_weights = np.array([row.dual_value() for row in victim_row]) if worst else None
        last = it == iterations or spent() > budget or (deadline is not None and deadline())
        found, lagrange = price(exact=False)
        if not found:  # the heuristic found nothing: price exactly, which also bounds
            found, lagrange = price(exact=True)
        elif it % 10 == 0 or last:
            _, lagrange = price(exact=True)
        if math.isfinite(lagrange):
            best = max(best, lagrange)
        if not found:
            converged = True
            best = max(best, min(value, lagrange))
            break
        added = sum(add_column(key, pattern) for key, pattern in found)
        if added == 0 or last:
            break
    return BoundResult(bound=max(best, floor_bound(inst), 0.0), window=length, iterations=it, columns=len(seen),
                       converged=converged, work=spent(), multipliers=multipliers, victim_weights=victim_weights,
                       pool=tuple(seen))
