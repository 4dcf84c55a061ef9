"""The channel-count relaxation's subproblem: a dynamic programme along the channels.

Relaxing every system's channel count |x_v| = N_v with a multiplier lambda_v
(`planning.lagrange`) leaves: choose for each channel c a set t_c of systems
(the state) among those allowed there, pins included, minimising

    sum_c [ sum_{v in t_c} (w_v node[v, c] - lambda_v) + P0(t_c) + P1(t_{c-1}, t_c) ]

with w the victims' weights, node[v, c] = q_v(c) / N_v, P0(t) the co-channel
cost of the pairs inside t and P1(s, t) the offset-1 cost of the pairs across
two consecutive channels (both directions; `pair_offset_costs`). The minimum
over such paths is found exactly by a DP whose states are the sets.

With few systems (`history_for`) the states are the sets of two consecutive
channels instead (`_forward_pairs`), which adds P2(t_{c-2}, t_c), the offset-2
cost, to the sum: offsets 0 to 2 are kept and only offsets >= 3 dropped
(separation 3 and guards of width 2 are kept at offset 2 as well). The text
below describes the one-channel form; the pruning is the same in both.

What the relaxed problem keeps and what it drops (so every bound stays valid):

- kept exactly: allowed channels, pins, pair costs at offsets 0 and 1,
  separation 2 (a system with separation >= 2 is never on two consecutive
  channels), guards of width 0 and 1;
- dropped: pair costs at offsets >= 2 (they are >= 0, so dropping them lowers
  every plan's objective), separation beyond one channel, guards beyond
  offset 1 (dropping a constraint only adds plans). `Dropped` lists them with
  their cost weight. The least harm of a pair over all offsets is paid on
  every pair of channel uses whatever the plan (the instance's
  `constant_harm`) and stays a constant (`split_harm`). The per-offset harm
  is read in one place, `harm_table`: the instance's constant and varying
  harm (`constant_harm + offset_harm`) at every offset of the grid.

Exact pruning. Pair costs are >= 0, so removing system v from a state
changes the path's cost by at most -(node - lambda_v) - (v's co-channel cost
in the state), and removing it never breaks a kept constraint. So a state in
which some unpinned v has lambda_v - w_v node[v, c] <= its co-channel cost
there is never needed: some optimal path avoids it. The states left are the
sets whose every unpinned member earns more than its co-channel cost
(`_class_states` enumerates them depth first; the family is closed under
removing unpinned members, so each is met once). Channels that look the same
to every system (allowed set, pins, node costs) share one list of states.
The transition from channel c - 1 to c uses one matrix of offset-1 costs per
pair of channel classes (built once per solve; infinite where separation or a
guard forbids); each channel is then one min-plus product, every pair
evaluated in a vectorised pass (`_min_plus`). When that matrix would exceed
DENSE_PAIRS entries, the compiled scan `_forward` sums the costs per pair
instead, scanning the previous states in order of their DP value and
stopping as soon as a value reaches the best found (the offset-1 cost added
is >= 0). The
work is the states enumerated, the matrix entries built and the pairs
scanned.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from cohop.planning.instance import PlanningInstance
from cohop.planning.jit import njit
from cohop.planning.linear import varying_harm

#: Offsets the DP over single channels' sets carries: 0 (co-channel) and 1 (consecutive channels).
KEPT_OFFSETS = 2
#: The DP over the sets of two consecutive channels (`_forward_pairs`: offsets 0, 1 and 2 kept) is used when its
#: worst case, (2^S)^3 triples of states per channel times the channels, stays within this many (S <= 5 on up to
#: 900 channels, S = 6 on up to 110): the sites with few systems, where offset 2 is a large share of the
#: objective under soft harm (9 % of the small bench site's plan, 7 % of the water-works sample's).
PAIR_DP_TRIPLES = 30_000_000


def history_for(inst: PlanningInstance) -> int:
    """Channels of history the DP's states hold: 2 (offsets 0 to 2 kept) when affordable, else 1."""
    return 2 if (2 ** inst.n_systems) ** 3 * inst.n_channels <= PAIR_DP_TRIPLES else 1


#: At most this many systems: states are bit masks in 64-bit integers.
MAX_SYSTEMS = 62


# --- pair costs per offset ------------------------------------------------------------------------------------

def harm_table(inst: PlanningInstance) -> np.ndarray:
    """H[v, a, d] for d = 0 .. C - 1: the share of a pair of channel uses (v on c, a on c +- d) that counts as a
    hit to v, the total harm constant_harm + offset_harm (the varying part zero beyond its W: there the harm is
    the constant part). The one place the planner's bound reads the per-offset harm."""
    out = np.asarray(inst.constant_harm, dtype=float)[:, :, None] + varying_harm(inst, inst.n_channels)
    idx = np.arange(inst.n_systems)
    out[idx, idx, :] = 0.0
    return out


def split_harm(inst: PlanningInstance) -> tuple[np.ndarray, np.ndarray]:
    """(constant share, varying harm): every pair of channel uses of v and a lies at some offset 0 .. C - 1, so
    the least harm over those offsets, K[v, a] (the instance's constant_harm), is paid on all N_v N_a pairs
    whatever the plan; the rest, H - K >= 0 per offset, is what channels change."""
    h = harm_table(inst)
    floor = h.min(axis=2)
    return floor, h - floor[:, :, None]


def widest_offset(inst: PlanningInstance) -> int:
    """The largest offset at which some pair's cost still depends on the channels (-1: none)."""
    varying = split_harm(inst)[1].max(axis=(0, 1))
    hit = np.flatnonzero(varying > 0)
    return int(hit[-1]) if hit.size else -1


def pair_offset_costs(inst: PlanningInstance, max_offset: int | None = None) -> np.ndarray:
    """U[d, v, a]: cost to victim v (unweighted) of one pair (v on c, a on c +- d), d = 0 .. max_offset, less
    the constant share (`constant_per_victim`)."""
    top = widest_offset(inst) if max_offset is None else max_offset
    coef = inst.pair_coef()
    varying = split_harm(inst)[1]
    out = np.zeros((max(top, 0) + 1, *coef.shape))
    for d in range(min(out.shape[0], varying.shape[2])):
        out[d] = coef * varying[:, :, d]
    return out


def constant_per_victim(inst: PlanningInstance) -> np.ndarray:
    """Each victim's cost from the constant share of its pairs: N_v N_a pairs whatever the plan."""
    n = inst.sizes.astype(float)
    return (inst.pair_coef() * split_harm(inst)[0] * n[:, None] * n[None, :]).sum(axis=1)


def symmetric(u: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """P[v, a] = w_v U[v, a] + w_a U[a, v]: the weighted cost of one pair of channel uses of v and a."""
    wu = weights[:, None] * u
    return wu + wu.T


# --- what the relaxation drops -----------------------------------------------------------------------------

@dataclass(frozen=True)
class Dropped:
    """What the relaxed problem leaves out; every bound built on it stays valid (see the module's text)."""

    offsets_from: int  # pair costs at offsets >= this are dropped
    #: (victim, source, offset, cost to the victim per pair of channel uses, unweighted)
    pairs: tuple[tuple[int, int, int, float], ...]
    #: the weighted cost of one pair of channel uses, summed over the dropped (victim, source, offset)
    total_weight: float
    separations: tuple[tuple[int, int], ...]  # (system, separation) enforced only between consecutive channels
    guards: tuple[tuple[int, int, int], ...]  # (v, a, width) enforced only up to offset 1
    #: weighted cost of the dropped pairs on the plans returned with the bound (filled by `planning.lagrange`)
    on_best_plan: float | None = None

    def describe(self, ids: list[str]) -> str:
        parts = []
        if self.pairs:
            parts.append(f"{len(self.pairs)} pair cost(s) at offsets >= {self.offsets_from} (weight "
                         f"{self.total_weight:.3g} per pair of channel uses"
                         + (f", {self.on_best_plan:.3g} of the best plan's objective" if self.on_best_plan is not None
                            else "") + ")")
        if self.separations:
            parts.append("separation beyond one channel for " + ", ".join(ids[v] for v, _ in self.separations))
        if self.guards:
            parts.append("guards beyond offset 1 for " + ", ".join(f"{ids[v]}/{ids[a]}" for v, a, _ in self.guards))
        return "; ".join(parts) if parts else "nothing"


def dropped_terms(inst: PlanningInstance, from_offset: int = KEPT_OFFSETS,
                  weights: np.ndarray | None = None) -> Dropped:
    u = pair_offset_costs(inst)
    w = inst.weights if weights is None else weights
    pairs = []
    total = 0.0
    for d in range(from_offset, u.shape[0]):
        for v, a in zip(*np.nonzero(u[d])):
            pairs.append((int(v), int(a), d, float(u[d, v, a])))
            total += float(w[v] * u[d, v, a])
    seps = tuple((int(v), int(s)) for v, s in enumerate(inst.separation) if s > from_offset)
    guards = tuple((int(v), int(a), int(g)) for v, a, g in inst.guards if g >= from_offset)
    return Dropped(from_offset, tuple(pairs), total, seps, guards)


# --- the relaxed problem ----------------------------------------------------------------------------------

def _masks(rows: np.ndarray) -> np.ndarray:
    """Bit masks of the columns of a boolean (systems, n) array: one int64 per column."""
    bits = (np.int64(1) << np.arange(rows.shape[0], dtype=np.int64))[:, None]
    return (rows.astype(np.int64) * bits).sum(axis=0).astype(np.int64)


@dataclass
class Relaxation:
    """The relaxed problem of an instance, built once; each DP solve only re-weights it."""

    inst: PlanningInstance
    node: np.ndarray  # (S, C) q_v(c) / N_v, unweighted
    u: np.ndarray  # (history + 1, S, S) unweighted per-victim cost at offsets 0 .. history
    constant: np.ndarray  # (S,) per-victim constant (the constant part of the harm)
    channel_class: np.ndarray  # (C,) class of each channel
    class_allowed: np.ndarray  # (K,) int64 masks of systems allowed (or pinned) on the class's channels
    class_pinned: np.ndarray  # (K,) int64 masks of pinned systems
    class_node: np.ndarray  # (K, S)
    sep_mask: int  # systems that may not hold two consecutive channels
    g0: np.ndarray  # (S,) int64: systems that may not share a channel with v (guards)
    g1: np.ndarray  # (S,) int64: systems that may not sit on a channel next to v's (guards of width >= 1)
    dropped: Dropped
    feasible: bool = True  # False when the kept constraints alone leave no plan (pins that clash)
    notes: list[str] = field(default_factory=list)
    history: int = 1  # channels of history in a state: 2 keeps offset 2 too (`_forward_pairs`)
    sep3_mask: int = 0  # systems that may not hold two channels two apart (separation >= 3; read at history 2)
    g2: np.ndarray | None = None  # (S,) int64: guards of width >= 2 (enforced at offset 2 at history 2)

    @property
    def n_systems(self) -> int:
        return self.node.shape[0]

    @property
    def n_channels(self) -> int:
        return self.node.shape[1]

    def weighted(self, weights: np.ndarray) -> tuple[np.ndarray, ...]:
        """(P0, P1[, P2]): symmetric weighted pair costs at the kept offsets."""
        return tuple(symmetric(u, weights) for u in self.u)

    def per_victim(self, x: np.ndarray) -> np.ndarray:
        """Each victim's relaxed cost on an occupancy x (any counts): node, the kept offsets, constant."""
        xf = x.astype(float)
        co = xf @ xf.T
        np.fill_diagonal(co, 0.0)
        out = (self.node * xf).sum(axis=1) + (self.u[0] * co).sum(axis=1) + self.constant
        for d in range(1, self.u.shape[0]):
            near = xf[:, :-d] @ xf[:, d:].T
            out = out + (self.u[d] * (near + near.T)).sum(axis=1)
        return out


def relax(inst: PlanningInstance, history: int | None = None) -> Relaxation:
    """The relaxed problem; `history` (1 or 2, default `history_for`) the channels a DP state holds."""
    s, c = inst.n_systems, inst.n_channels
    if s > MAX_SYSTEMS:
        raise ValueError(f"the channel DP takes at most {MAX_SYSTEMS} systems")
    history = history_for(inst) if history is None else int(history)
    if history not in (1, 2):
        raise ValueError("history must be 1 or 2")
    u = pair_offset_costs(inst, history)
    pool = inst.allowed | inst.pinned
    node = np.where(pool, inst.node_coef(), 0.0)
    keys: dict[tuple, int] = {}
    channel_class = np.empty(c, dtype=np.int64)
    for k in range(c):
        key = (pool[:, k].tobytes(), inst.pinned[:, k].tobytes(), np.round(node[:, k], 15).tobytes())
        channel_class[k] = keys.setdefault(key, len(keys))
    first = np.array([int(np.flatnonzero(channel_class == k)[0]) for k in range(len(keys))], dtype=int)
    g0, g1, g2 = (_guard_masks(inst, width) for width in (0, 1, 2))
    sep_mask = int(_masks((inst.separation >= 2)[:, None])[0])
    sep3_mask = int(_masks((inst.separation >= 3)[:, None])[0])
    out = Relaxation(inst=inst, node=node, u=u, constant=constant_per_victim(inst), channel_class=channel_class,
                     class_allowed=_masks(pool[:, first]), class_pinned=_masks(inst.pinned[:, first]),
                     class_node=node[:, first].T.copy(), sep_mask=sep_mask, g0=g0, g1=g1,
                     dropped=dropped_terms(inst, history + 1), history=history, sep3_mask=sep3_mask, g2=g2)
    for k in range(len(keys)):
        pins = inst.pinned[:, first[k]]
        if any(g0[v] & out.class_pinned[k] for v in np.flatnonzero(pins)):
            out.feasible = False
            out.notes.append("pins on one channel clash with a guard")
    return out


def _guard_masks(inst: PlanningInstance, width: int) -> np.ndarray:
    """(S,) int64: the systems each system may not meet at offset `width` (guards at least that wide)."""
    out = np.zeros(inst.n_systems, dtype=np.int64)
    for v, a, w in inst.guards:
        if w >= width:
            out[v] |= np.int64(1) << a
            out[a] |= np.int64(1) << v
    return out


# --- the compiled kernels -----------------------------------------------------------------------------------

@njit(cache=True)
def _class_states(cand, pins, margin, p0, g0, cap, out_mask, out_cost):
    """Sets of systems on one class of channels that pass the pruning: every pin, and unpinned members
    (from `cand`) each earning more (margin = lambda - weighted node cost) than its co-channel cost.
    Writes masks and costs (sum of -margin plus co-channel costs); returns the count, or -1 above `cap`."""
    n_sys = margin.size
    depth_max = cand.size + 1
    loads = np.zeros((depth_max, n_sys))
    masks = np.zeros(depth_max, np.int64)
    costs = np.zeros(depth_max)
    nxt = np.zeros(depth_max, np.int64)
    added = np.zeros(depth_max, np.int64)
    base = np.int64(0)
    for i in range(pins.size):
        v = pins[i]
        costs[0] += loads[0, v] - margin[v]
        for a in range(n_sys):
            loads[0, a] += p0[v, a]
        base |= np.int64(1) << v
    masks[0] = base
    count = 0
    if count >= cap:
        return -1
    out_mask[0] = base
    out_cost[0] = costs[0]
    count = 1
    depth = 0
    nxt[0] = 0
    while depth >= 0:
        i = nxt[depth]
        if i >= cand.size:
            depth -= 1
            continue
        nxt[depth] = i + 1
        a = cand[i]
        m = masks[depth]
        if (g0[a] & m) != 0 or loads[depth, a] >= margin[a]:
            continue
        ok = True
        for k in range(1, depth + 1):
            u = added[k]
            if loads[depth, u] + p0[u, a] >= margin[u]:
                ok = False
                break
        if not ok:
            continue
        d2 = depth + 1
        masks[d2] = m | (np.int64(1) << a)
        costs[d2] = costs[depth] + loads[depth, a] - margin[a]
        for b in range(n_sys):
            loads[d2, b] = loads[depth, b] + p0[a, b]
        added[d2] = a
        nxt[d2] = i + 1
        if count >= cap:
            return -1
        out_mask[count] = masks[d2]
        out_cost[count] = costs[d2]
        count += 1
        depth = d2
    return count


@njit(cache=True)
def _forward(channel_class, lo, hi, mask, cost, reach, g1, members, n_members, sep_mask, offsets, pred, max_pairs):
    """The DP along the channels over the states of each channel's class (`lo[k]:hi[k]` of the state arrays).

    reach[s, a]: offset-1 cost between state s's systems and system a on the next channel. Returns (value,
    path of global state indices, scanned pairs); value is inf when no path exists, -inf when the scan passed
    `max_pairs` pairs and gave up (a count, so where it gives up repeats)."""
    n_ch = channel_class.size
    widest = 0
    for k in range(lo.size):
        widest = max(widest, hi[k] - lo[k])
    prev = np.empty(max(widest, 1))
    cur = np.empty(max(widest, 1))
    k = channel_class[0]
    for j in range(hi[k] - lo[k]):
        prev[j] = cost[lo[k] + j]
    work = 0
    for c in range(1, n_ch):
        kp = channel_class[c - 1]
        k = channel_class[c]
        n_prev = hi[kp] - lo[kp]
        n_cur = hi[k] - lo[k]
        order = np.argsort(prev[:n_prev])
        if work > max_pairs:
            return -np.inf, np.full(n_ch, -1, np.int64), work
        for j in range(n_cur):
            t = lo[k] + j
            mt = mask[t]
            best = np.inf
            arg = -1
            for r in range(n_prev):
                i = order[r]
                vi = prev[i]
                if vi >= best:
                    break
                work += 1
                s = lo[kp] + i
                if (mask[s] & mt & sep_mask) != 0 or (g1[s] & mt) != 0:
                    continue
                val = vi
                for q in range(n_members[t]):
                    val += reach[s, members[t, q]]
                if val < best:
                    best = val
                    arg = i
            cur[j] = cost[t] + best
            pred[offsets[c] + j] = arg
        for j in range(n_cur):
            prev[j] = cur[j]
    k = channel_class[n_ch - 1]
    n_last = hi[k] - lo[k]
    path = np.full(n_ch, -1, np.int64)
    if n_last == 0:
        return np.inf, path, work
    best_j = 0
    for j in range(1, n_last):
        if prev[j] < prev[best_j]:
            best_j = j
    value = prev[best_j]
    if not np.isfinite(value):
        return np.inf, path, work
    j = best_j
    for c in range(n_ch - 1, -1, -1):
        path[c] = lo[channel_class[c]] + j
        if c > 0:
            j = pred[offsets[c] + j]
    return value, path, work


#: Floating-point liberties for the row minimum: reassociation lets the compiler vectorise it; no assumption
#: that values are finite (forbidden transitions are inf).
_ROW_MIN_MATH = {"reassoc", "nsz", "arcp", "contract"}


@njit(cache=True, fastmath=_ROW_MIN_MATH)
def _row_min(prev, row):
    """min_i (prev[i] + row[i]): one vectorised pass (a minimum is exact whatever the order of comparison)."""
    best = np.inf
    for i in range(prev.size):
        best = min(best, prev[i] + row[i])
    return best


@njit(cache=True)
def _min_plus(prev, t, cost, out, arg):
    """out[j] = cost[j] + min_i (prev[i] + t[j, i]), arg[j] the first i reaching it (-1: none finite); returns the
    pairs evaluated, every (i, j). Two passes per row, the minimum vectorised and then its first index: on the
    medium bench site 1.7 x faster than one scan by increasing prev that stops at the best found (which
    evaluated 90 % of the pairs there anyway: offset-1 costs are as large as the spread of the values)."""
    n = prev.size
    for j in range(t.shape[0]):
        row = t[j]
        best = _row_min(prev, row)
        at = -1
        if best < np.inf:
            for i in range(n):
                if prev[i] + row[i] == best:
                    at = i
                    break
        out[j] = cost[j] + best
        arg[j] = at
    return n * t.shape[0]


def _transition(member, mask, a: slice, b: slice, p: np.ndarray, sep: int, guards: np.ndarray) -> np.ndarray:
    """[state in a, state in b]: the pair costs p between two channels' states, inf where a system barred from
    both (`sep`, bit mask) or a guard (`guards`, per state: the systems its members keep away) forbids."""
    t = member[a].astype(float) @ p @ member[b].astype(float).T
    if sep != 0:
        t[(mask[a][:, None] & mask[b][None, :] & np.int64(sep)) != 0] = np.inf
    if guards[a].any():
        t[(guards[a][:, None] & mask[b][None, :]) != 0] = np.inf
    return t


def _state_guards(member: np.ndarray, guards: np.ndarray) -> np.ndarray:
    """Per state (rows of `member`): the union of its members' guard masks."""
    if member.shape[1] == 0:
        return np.zeros(member.shape[0], np.int64)
    return np.bitwise_or.reduce(np.where(member, guards[None, :], 0), axis=1).astype(np.int64)


def _forward_dense(rel: "Relaxation", lo, hi, mask, cost, member, p1, g1):
    """The same DP as `_forward` with the transition costs of each pair of consecutive channel classes as one
    matrix (states of the class before x states of the class after: offset-1 costs, inf where separation or a
    guard forbids the pair), built once per pair of classes; each channel is then one min-plus product.
    Returns (value, path of global state indices, pairs evaluated)."""
    classes = rel.channel_class
    cache: dict[tuple[int, int], np.ndarray] = {}
    work = 0

    def transition(kp: int, k: int) -> np.ndarray:
        nonlocal work
        key = (kp, k)
        if key not in cache:
            t = _transition(member, mask, slice(lo[kp], hi[kp]), slice(lo[k], hi[k]), p1, rel.sep_mask, g1)
            cache[key] = np.ascontiguousarray(t.T)  # [next, previous]
            work += t.size
        return cache[key]

    n_ch = classes.size
    k0 = classes[0]
    value = cost[lo[k0]:hi[k0]].copy()
    pred = []
    for c in range(1, n_ch):
        kp, k = classes[c - 1], classes[c]
        t = transition(kp, k)
        nxt = np.empty(t.shape[0])
        arg = np.empty(t.shape[0], np.int64)
        work += _min_plus(value, t, cost[lo[k]:hi[k]], nxt, arg)
        value = nxt
        pred.append(arg)
    path = np.full(n_ch, -1, np.int64)
    j = int(np.argmin(value))
    if not np.isfinite(value[j]):
        return np.inf, path, work
    best = float(value[j])
    for c in range(n_ch - 1, -1, -1):
        path[c] = lo[classes[c]] + j
        if c > 0:
            j = int(pred[c - 1][j])
    return best, path, work


def _forward_pairs(rel: "Relaxation", lo, hi, mask, cost, member, p1, p2, g1, g2):
    """The DP with history 2: V_c[i, j] is the least cost of a path whose sets on channels c - 1 and c are
    states i and j, so the offset-2 cost between channels c - 2 and c is exact:

        V_c[i, j] = cost[j] + T1(i, j) + min_h (V_{c-1}[h, i] + T2(h, j))

    T1 and T2 the offset-1 and offset-2 costs between two states (inf where separation or a guard forbids:
    separation >= 2 at offset 1, >= 3 at offset 2; guards of width >= 1 and >= 2), each built once per pair of
    channel classes. Dense numpy: the work is the (h, i, j) triples, sum over channels of the three classes'
    state counts. Returns (value, path of global state indices, triples)."""
    classes = rel.channel_class
    n_ch = classes.size
    cache: dict[tuple, np.ndarray] = {}

    def between(kp: int, k: int, d: int) -> np.ndarray:  # [state on c - d, state on c]
        key = (kp, k, d)
        if key not in cache:
            cache[key] = _transition(member, mask, slice(lo[kp], hi[kp]), slice(lo[k], hi[k]),
                                     p1 if d == 1 else p2, rel.sep_mask if d == 1 else rel.sep3_mask,
                                     g1 if d == 1 else g2)
        return cache[key]

    path = np.full(n_ch, -1, np.int64)
    k0 = classes[0]
    first = cost[lo[k0]:hi[k0]]
    if n_ch == 1:
        j = int(np.argmin(first))
        path[0] = lo[k0] + j
        return float(first[j]), path, first.size
    k1 = classes[1]
    value = first[:, None] + between(k0, k1, 1) + cost[lo[k1]:hi[k1]][None, :]
    work = value.size
    args = []
    for c in range(2, n_ch):
        kpp, kp, k = classes[c - 2], classes[c - 1], classes[c]
        triples = value[:, :, None] + between(kpp, k, 2)[:, None, :]  # [h, i, j]
        arg = np.argmin(triples, axis=0)
        best = np.take_along_axis(triples, arg[None], axis=0)[0]
        value = best + between(kp, k, 1) + cost[lo[k]:hi[k]][None, :]
        args.append(arg)
        work += triples.size
    i, j = np.unravel_index(int(np.argmin(value)), value.shape)
    total = float(value[i, j])
    if not np.isfinite(total):
        return np.inf, path, work
    path[n_ch - 1], path[n_ch - 2] = lo[classes[n_ch - 1]] + j, lo[classes[n_ch - 2]] + i
    for c in range(n_ch - 1, 1, -1):
        h = int(args[c - 2][i, j])
        path[c - 2] = lo[classes[c - 2]] + h
        i, j = h, i
    return total, path, work


#: Above this many (previous state, next state) pairs in a class transition, the compiled scan (`_forward`)
#: replaces the dense min-plus products.
DENSE_PAIRS = 16_000_000


# --- one solve -----------------------------------------------------------------------------------------------

@dataclass
class PathSolution:
    """The relaxed problem's optimum for one set of multipliers and weights."""

    value: float  # min over paths of sum (weighted cost - lambda . counts), without the constant
    x: np.ndarray | None  # (S, C) bool: the optimal path's sets (None when no path exists)
    work: int  # states enumerated plus pairs scanned
    states: int  # states over all classes
    pairs_scanned: int
    complete: bool = True  # False when a class had more states than the cap (then `value` is not computed)
    over_budget: bool = False  # the transitions' estimated, or counted, work passed the solve's `max_work`
    estimated_work: float = 0.0  # the work estimated before the transitions (set when over_budget)


def transition_estimate(rel: Relaxation, class_sizes: np.ndarray) -> float:
    """Work of the transitions, estimated before they run. Dense transitions: the matrix entries of each pair of
    consecutive classes, plus every (previous, next) state pair over every channel; the compiled scan:
    SCAN_SHARE of those pairs (its scans by increasing value stop early; rounded up from what it scanned on the
    medium bench site, 1.2 % of 11 billion pairs at 24 687 states)."""
    sizes = class_sizes[rel.channel_class].astype(float)
    if rel.history == 2:  # `_forward_pairs`: exactly its triples
        return float(sizes[0] * sizes[1] + (sizes[:-2] * sizes[1:-1] * sizes[2:]).sum()) if sizes.size > 1 \
            else float(sizes.sum())
    pairs = float(sizes[:-1] @ sizes[1:])
    if float(class_sizes.max(initial=0)) ** 2 > DENSE_PAIRS:
        return SCAN_SHARE * pairs
    kinds = sorted({(int(a), int(b)) for a, b in zip(rel.channel_class[:-1], rel.channel_class[1:])})
    return sum(float(class_sizes[a]) * float(class_sizes[b]) for a, b in kinds) + DENSE_SCAN_SHARE * pairs


#: Shares of the (previous, next) state pairs the scans evaluate (`transition_estimate`): the dense min-plus
#: evaluates every pair (`_min_plus`), the compiled scan stops early.
DENSE_SCAN_SHARE = 1.0
SCAN_SHARE = 0.02
#: Most states one class of channels may have; above it the solve gives up (the caller then keeps its bound).
STATE_CAP = 200_000


def _listed_states(only: np.ndarray, allowed: int, pinned: int, margin: np.ndarray, p0: np.ndarray,
                   g0: np.ndarray, bits: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The states of a restricted DP on one class of channels: the pins alone first, then each listed set with
    the pins added, where every member is allowed there and no guard parts two members; costs as
    `_class_states` gives them (-margin per member plus the co-channel cost of each pair). No pruning: a
    restricted DP gives plans, not bounds."""
    sets = np.unique(np.concatenate([[0], np.asarray(only, np.int64)]) | np.int64(pinned))
    sets = sets[(sets & ~np.int64(allowed | pinned)) == 0]
    member = (sets[:, None] & bits[None, :]) != 0
    guarded = np.bitwise_or.reduce(np.where(member, g0[None, :], 0), axis=1) if sets.size else sets
    sets, member = sets[(guarded & sets) == 0], member[(guarded & sets) == 0]
    base = np.flatnonzero(sets == np.int64(pinned))
    order = np.concatenate([base, np.flatnonzero(sets != np.int64(pinned))])
    sets, m = sets[order], member[order].astype(float)
    cost = -(m @ margin) + 0.5 * ((m @ p0) * m).sum(axis=1)
    return sets.astype(np.int64), cost


def solve(rel: Relaxation, lam: np.ndarray, weights: np.ndarray, cap: int = STATE_CAP,
          max_work: float = np.inf, only: np.ndarray | None = None) -> PathSolution:
    """The DP's optimum for multipliers `lam` (per channel use) and victim weights `weights`.

    Once the states are enumerated, the transitions' work is estimated (`transition_estimate`); above
    `max_work` the solve gives up before them (`complete` False, `over_budget` True), since it cannot be
    interrupted once started."""
    s = rel.n_systems
    if not rel.feasible:
        return PathSolution(np.inf, None, 0, 0, 0)
    p = rel.weighted(weights)
    p0, p1 = p[0], p[1]
    n_classes = rel.class_allowed.size
    masks, costs, lo, hi = [], [], np.zeros(n_classes, np.int64), np.zeros(n_classes, np.int64)
    total = 0
    bits = np.int64(1) << np.arange(s, dtype=np.int64)
    for k in range(n_classes):
        margin = lam - weights * rel.class_node[k]
        allowed = (rel.class_allowed[k] & bits) != 0
        pinned = (rel.class_pinned[k] & bits) != 0
        if only is not None:  # a restricted DP (plans, not bounds): the listed sets, and the pins alone
            out_mask, out_cost = _listed_states(only, rel.class_allowed[k], rel.class_pinned[k], margin, p0, rel.g0,
                                                bits)
            n = out_mask.size
        else:
            cand = np.flatnonzero(allowed & ~pinned & (margin > 0)).astype(np.int64)
            pins = np.flatnonzero(pinned).astype(np.int64)
            size = 1024
            while True:
                out_mask = np.empty(size, np.int64)
                out_cost = np.empty(size)
                n = _class_states(cand, pins, margin, p0, rel.g0, size, out_mask, out_cost)
                if n >= 0 or size >= cap:
                    break
                size = min(cap, 8 * size)
            if n < 0:
                return PathSolution(-np.inf, None, total, total, 0, complete=False)
        lo[k] = total
        total += n
        hi[k] = total
        masks.append(out_mask[:n])
        costs.append(out_cost[:n])
    estimate = total + transition_estimate(rel, hi - lo)
    if estimate > max_work:
        return PathSolution(-np.inf, None, total, total, 0, complete=False, over_budget=True, estimated_work=estimate)
    mask = np.concatenate(masks)
    cost = np.concatenate(costs)
    member = ((mask[:, None] & bits[None, :]) != 0)
    reach = member.astype(float) @ p1
    g1 = _state_guards(member, rel.g1)
    n_members = member.sum(axis=1).astype(np.int64)
    members = np.zeros((mask.size, max(1, int(n_members.max(initial=0)))), np.int64)
    rows, cols = np.nonzero(member)
    rank = np.arange(rows.size) - np.searchsorted(rows, rows)
    members[rows, rank] = cols
    widest = int((hi - lo).max(initial=0))
    if rel.history == 2:
        value, path, scanned = _forward_pairs(rel, lo, hi, mask, cost, member, p1, p[2], g1,
                                              _state_guards(member, rel.g2))
    elif widest * widest <= DENSE_PAIRS:
        value, path, scanned = _forward_dense(rel, lo, hi, mask, cost, member, p1, g1)
    else:
        sizes = (hi - lo)[rel.channel_class]
        offsets = np.concatenate([[0], np.cumsum(sizes)[:-1]]).astype(np.int64)
        pred = np.empty(int(sizes.sum()), np.int64)
        left = max_work - total if np.isfinite(max_work) else float(2**62)
        value, path, scanned = _forward(rel.channel_class, lo, hi, mask, cost, reach, g1.astype(np.int64), members,
                                        n_members, np.int64(rel.sep_mask), offsets, pred, np.int64(min(left, 2**62)))
        if value == -np.inf:  # the scans passed the work left: no bound from this solve
            return PathSolution(-np.inf, None, total + int(scanned), total, int(scanned), complete=False,
                                over_budget=True)
    if not np.isfinite(value):
        return PathSolution(np.inf, None, total + int(scanned), total, int(scanned))
    x = member[path].T.copy()
    return PathSolution(float(value), x, total + int(scanned), total, int(scanned))


def warm_kernels() -> None:
    """Compile (or load from the cache) the kernels on a two-system, three-channel problem."""
    p = np.zeros((2, 2))
    out_mask = np.empty(8, np.int64)
    out_cost = np.empty(8)
    n = _class_states(np.array([0, 1], np.int64), np.zeros(0, np.int64), np.ones(2), p, np.zeros(2, np.int64), 8,
                      out_mask, out_cost)
    classes = np.zeros(3, np.int64)
    lo, hi = np.array([0], np.int64), np.array([n], np.int64)
    members = np.zeros((n, 2), np.int64)
    _forward(classes, lo, hi, out_mask[:n], out_cost[:n], np.zeros((n, 2)), np.zeros(n, np.int64), members,
             np.zeros(n, np.int64), np.int64(0), np.array([0, n, 2 * n], np.int64), np.empty(3 * n, np.int64),
             np.int64(2**62))
    cost = np.zeros(2 * n)
    _min_plus(np.zeros(n), np.ascontiguousarray(np.zeros((n, n))), cost[n:2 * n], np.empty(n), np.empty(n, np.int64))
