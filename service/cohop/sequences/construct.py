"""Build a hopping sequence for every system of a plan.

Unsynchronised systems (`_family_orders`): systems whose hop sets share
channels form a component; with U the union of their channels and p the
smallest prime >= |U|, a seeded random injection relabels U into Z_p (one
common relabelling, which keeps correlations) and system number i of the
component takes member a_i of the one-coincidence family s_a(t) = a t mod p
(`theory.linear_congruence_family`), deleting the labels of channels it does
not use. Each system then visits each of its channels once per period. When
all members share one hop set of prime size the family property holds
exactly (at most one coincidence per period at any shift); otherwise the
deletion can add coincidences, which the analysis measures and reports.

Spacing (`_respace`): consecutive hops (cyclically) should be at least the
coherence bandwidth apart, so that a retry on the next hop fades
independently. A deterministic repair swaps hops until no consecutive pair
is too close; where the hop set is too narrow for that, the largest spacing
reached is kept and reported. The repair's work is bounded whatever the
delay spread: it starts at the most any order of the hop set can keep
(`spacing_ceiling`) and makes at most RESPACE_WORK swap trials in all.

Slot-aligned time-base groups (`_orthogonal_group`): equal hop-set sizes N;
CP-SAT assigns each member a permutation of its hop set such that no two
members use the same channel in the same slot (always possible when the
group has at most N members, by Konig's edge-colouring theorem), keeping the
spacing, and avoiding each other's harmful windows where it can. Identical
hop sets get cyclic shifts of one sequence instead.
"""

from __future__ import annotations

import math
import random
from dataclasses import dataclass

import numpy as np
from ortools.sat.python import cp_model

from cohop.planning import cpsat
from cohop.planning.deadline import Budget, Deadline
from cohop.prepare import PreparedSite
from cohop.sequences import theory

#: Swap trials the spacing repair makes at most per sequence (a count, so the result is deterministic).
RESPACE_WORK = 100_000
#: Calibrated seconds of CP-SAT work per slot-aligned group (`cohop.planning.cpsat`): 2 deterministic units.
GROUP_WORK_S = 4.0
#: Most spacing clauses a slot-aligned group's model may hold (a tiny delay spread asks for wide spacing).
GROUP_CLAUSES = 200_000


@dataclass(frozen=True)
class Sequence:
    system: int
    channels: np.ndarray  # the hop order (grid indices); its length is the period in hops
    construction: str  # "one-coincidence", "orthogonal", "cyclic shift" or "given"
    component: int  # systems building from one family share a component number
    prime: int | None = None
    member: int | None = None
    required_spacing: int = 1  # grid steps wanted between consecutive hops
    group: str | None = None  # time-base group of an aligned construction


def required_spacing_channels(prep: PreparedSite, rms_delay_spread_s: float) -> int:
    """Coherence bandwidth (envelope correlation 0.5) in grid steps, at least one step and at most the grid
    (a tiny delay spread asks for more than any band holds)."""
    with np.errstate(over="ignore", divide="ignore"):
        steps = theory.coherence_bandwidth_hz(rms_delay_spread_s) / prep.spacing_hz
    if not math.isfinite(steps) or steps > prep.n_channels:
        return max(1, int(prep.n_channels))
    return max(1, math.ceil(steps - 1e-9))


def spacing_ceiling(channels: np.ndarray) -> int:
    """The most any cyclic order of `channels` can keep between consecutive hops: each channel has two
    different neighbours, so the spacing is at most its second-largest distance to another channel,
    for every channel. Only the two lowest and two highest channels can be that far from any channel."""
    c = np.sort(np.asarray(channels, dtype=np.int64))
    n = c.size
    if n < 3:
        return int(c[-1] - c[0]) if n == 2 else 0
    idx = np.arange(n)
    cand = np.stack([c - c[0], c - c[1], c[-1] - c, c[-2] - c]).astype(float)
    cand[0, idx == 0] = cand[1, idx == 1] = cand[2, idx == n - 1] = cand[3, idx == n - 2] = -1.0  # not itself
    cand.sort(axis=0)
    return int(cand[-2].min())


def _components(hop_sets: list[np.ndarray], members: list[int]) -> list[list[int]]:
    """Connected components of 'shares a channel' among `members`."""
    parent = {v: v for v in members}

    def find(v):
        while parent[v] != v:
            parent[v] = parent[parent[v]]
            v = parent[v]
        return v

    owner: dict[int, int] = {}
    for v in members:
        for c in hop_sets[v].tolist():
            if c in owner:
                parent[find(v)] = find(owner[c])
            else:
                owner[c] = v
    groups: dict[int, list[int]] = {}
    for v in members:
        groups.setdefault(find(v), []).append(v)
    return sorted(groups.values())


def _gaps_ok(order: np.ndarray, k: int, spacing: int) -> bool:
    n = order.size
    return all(abs(int(order[(k + d) % n]) - int(order[(k + d + 1) % n])) >= spacing for d in (-1, 0))


def _min_gap(order: np.ndarray) -> int:
    return int(np.abs(np.diff(np.concatenate([order, order[:1]]))).min())


def _respace(order: np.ndarray, spacing: int, rng: random.Random,
             work: int = RESPACE_WORK) -> tuple[np.ndarray, int]:
    """Swap hops until every consecutive pair (cyclically) is at least `spacing` apart; if that
    fails, try one step less, from at most `spacing_ceiling`. At most `work` swap trials in all; when they
    run out, the order as built is kept. Returns the order and the spacing it keeps."""
    n = order.size
    if n < 3:
        return order.copy(), int(abs(order[0] - order[-1])) if n == 2 else spacing
    trials = 0
    for target in range(min(spacing, spacing_ceiling(order)), 0, -1):
        out = order.copy()
        for _ in range(20 * n):
            bad = [t for t in range(n) if abs(int(out[t]) - int(out[(t + 1) % n])) < target]
            if not bad:
                return out, target
            t = bad[0]
            k = (t + 1) % n
            moved = False
            for s in rng.sample(range(n), n):
                if s in (t, k):
                    continue
                trials += 1
                out[k], out[s] = out[s], out[k]
                if _gaps_ok(out, k, target) and _gaps_ok(out, s, target):
                    moved = True
                    break
                out[k], out[s] = out[s], out[k]
            if not moved or trials >= work:
                break
        if trials >= work:
            break
    return order.copy(), _min_gap(order)


def _family_orders(prep: PreparedSite, hop_sets, members: list[int], seed: int, spacing: int, first_component: int):
    out = []
    for ci, comp in enumerate(_components(hop_sets, members)):
        union = np.unique(np.concatenate([hop_sets[v] for v in comp]))
        p = theory.prime_at_least(max(2, union.size))
        rng = random.Random(f"{seed}:{ci}:{union.size}")
        labels = rng.sample(range(p), union.size)  # the common relabelling: channel -> label
        label_of = dict(zip(union.tolist(), labels))
        channel_of = {lab: ch for ch, lab in label_of.items()}
        for i, v in enumerate(comp):
            a = 1 + (i % (p - 1)) if p > 2 else 1
            mine = {label_of[c] for c in hop_sets[v].tolist()}
            order = np.array([channel_of[lab] for lab in ((a * np.arange(p)) % p).tolist() if lab in mine])
            order, reached = _respace(order, spacing, rng)
            out.append(Sequence(system=v, channels=order, construction="one-coincidence",
                                component=first_component + ci, prime=p, member=a, required_spacing=spacing))
    return out


def _group_spacing(hop_sets, group: list[int], spacing: int) -> int:
    """The spacing the group's model asks for: at most what every member's set allows, and small enough that
    the model's spacing clauses (members x slots x close channel pairs) stay within GROUP_CLAUSES."""
    spacing = min([spacing] + [max(1, spacing_ceiling(hop_sets[v])) for v in group])
    n = hop_sets[group[0]].size
    while spacing > 1:
        close = sum(int((np.abs(hop_sets[v][:, None] - hop_sets[v][None, :]) < spacing).sum()) - n for v in group)
        if close * n <= GROUP_CLAUSES:
            break
        spacing -= 1
    return spacing


def _orthogonal_group(prep: PreparedSite, hop_sets, group: list[int], name: str, seed: int, spacing: int,
                      component: int, work_s: float, budget: Budget) -> list[Sequence] | None:
    """Members of one slot-aligned group: no shared channel in any slot (None if CP-SAT finds none)."""
    n = hop_sets[group[0]].size
    if any(hop_sets[v].size != n for v in group) or len(group) > n:
        return None
    if all(np.array_equal(hop_sets[v], hop_sets[group[0]]) for v in group):
        base = _family_orders(prep, hop_sets, [group[0]], seed, spacing, component)[0].channels
        return [Sequence(system=v, channels=np.roll(base, -j), construction="cyclic shift", component=component,
                         required_spacing=spacing, group=name) for j, v in enumerate(group)]
    spacing = _group_spacing(hop_sets, group, spacing)
    m = cp_model.CpModel()
    b = {}
    for v in group:
        for t in range(n):
            for c in hop_sets[v].tolist():
                b[v, t, c] = m.new_bool_var("")
        for t in range(n):
            m.add_exactly_one(b[v, t, c] for c in hop_sets[v].tolist())
        for c in hop_sets[v].tolist():
            m.add_exactly_one(b[v, t, c] for t in range(n))
        if spacing > 1:
            for t in range(n):
                for c in hop_sets[v].tolist():
                    for c2 in hop_sets[v].tolist():
                        if c != c2 and abs(c - c2) < spacing:
                            m.add_bool_or([b[v, t, c].Not(), b[v, (t + 1) % n, c2].Not()])
    channels = sorted(set().union(*[set(hop_sets[v].tolist()) for v in group]))
    for t in range(n):
        for c in channels:
            users = [b[v, t, c] for v in group if (v, t, c) in b]
            if len(users) > 1:
                m.add_at_most_one(users)
    penalties = []
    for i, v in enumerate(group):
        for a in group[i + 1:]:
            w = int(max(prep.window[v, a], prep.window[a, v]))
            if w < 1:
                continue
            for t in range(n):
                for c in hop_sets[v].tolist():
                    for c2 in hop_sets[a].tolist():
                        if 0 < abs(c - c2) <= w:
                            z = m.new_bool_var("")
                            m.add_bool_or([b[v, t, c].Not(), b[a, t, c2].Not(), z])
                            penalties.append(z)
    # seeded random tie-breaking costs keep the orders pseudo-random; window overlaps cost far more
    rng = random.Random(f"{seed}:{name}")
    ties = [rng.randrange(8) * lit for lit in b.values()]
    m.minimize(1000 * sum(penalties) + sum(ties))
    result = cpsat.run(m, budget, f"time-base group {name!r} sequences", work_s, workers=1, seed=seed,
                       deterministic=True)
    if not result.found:
        return None
    solver = result.solver
    out = []
    for v in group:
        order = np.array([next(c for c in hop_sets[v].tolist() if solver.value(b[v, t, c])) for t in range(n)])
        out.append(Sequence(system=v, channels=order, construction="orthogonal", component=component,
                            required_spacing=spacing, group=name))
    return out


def build_sequences(prep: PreparedSite, hop_sets, seed: int = 0,
                    rms_delay_spread_s: float = theory.DEFAULT_RMS_DELAY_SPREAD_S,
                    group_work_s: float = GROUP_WORK_S,
                    budget: Budget | None = None) -> tuple[list[Sequence], list[str]]:
    """A sequence per system, and notes on what could not be done as asked. `budget` stops the groups'
    CP-SAT calls at the request's deadline (by default, a deadline of the groups' own work)."""
    sets = [np.unique(np.asarray(h, dtype=int)) for h in hop_sets]
    spacing = required_spacing_channels(prep, rms_delay_spread_s)
    notes: list[str] = []
    groups: dict[str, list[int]] = {}
    for v, s in enumerate(prep.site.systems):
        if s.time_base_group is not None:
            groups.setdefault(s.time_base_group, []).append(v)
    out: dict[int, Sequence] = {}
    component = 0
    if budget is None and groups:
        own = Deadline.of(10 * group_work_s * len(groups), 10 * group_work_s * len(groups))
        budget = own.budget(own.limit_s, own.end)
    for name, members in sorted(groups.items()):
        if len(members) < 2:
            continue
        seqs = _orthogonal_group(prep, sets, members, name, seed, spacing, component, group_work_s, budget)
        if seqs is None:
            notes.append(f"time-base group {name!r}: no orthogonal sequences (they need equal hop-set sizes and at "
                         "most as many members as channels); its members hop unaligned-style instead")
            continue
        component += 1
        for s in seqs:
            out[s.system] = s
    rest = [v for v in range(prep.n_systems) if v not in out]
    for s in _family_orders(prep, sets, rest, seed, spacing, component):
        out[s.system] = s
    return [out[v] for v in range(prep.n_systems)], notes
