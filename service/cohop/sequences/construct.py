"""Build a hopping sequence for every system of a plan.

Unsynchronised systems (`_family_orders`): systems whose hop sets share
channels form a component; with U the union of their channels and p the
smallest prime >= |U|, system number i of the component takes member a_i of
the linear-congruence family s_a(t) = a t mod p [1], and one relabelling
common to all members maps the labels Z_p to the channels of U (labels left
over, and the channels a system does not use, are deleted from its order).
Each system then visits each of its channels once per period. A common
relabelling keeps every coincidence a coincidence [1], so when all members
share one hop set of prime size the family's property holds exactly: any
two members coincide once per period at every shift. Deletion can add
coincidences; the construction counts its members' coincidences
(`hopping.max_coincidences_between`) and calls the component
"one-coincidence" only when no two of them coincide more than once at any
shift (otherwise "linear congruence").

Spacing (`CommonRelabelling`): consecutive hops (cyclically) should be at
least the coherence bandwidth apart [2], so that a retry on the next hop
fades independently. The repair changes the common relabelling only (it
swaps the labels of two channels, or gives a channel a spare label), never
one member's order alone, so whatever it does keeps the family's
coincidences; it accepts a change when it lowers the members' summed
squared shortfall below their spacing. Each member aims at the spacing
asked for or the most its hop set allows (`spacing_ceiling`), whichever is
less. Its work is a count of steps (RESPACE_WORK), so the result is
deterministic; where the spacing cannot be reached, the closest step is
kept, reported, and a note says so.

Slot-aligned time-base groups (`_orthogonal_group`): equal hop-set sizes N;
CP-SAT assigns each member a permutation of its hop set such that no two
members use the same channel in the same slot (always possible when the
group has at most N members, by Konig's edge-colouring theorem [3]),
keeping the spacing, and avoiding each other's harmful windows where it
can. Identical hop sets get cyclic shifts of one sequence instead.

References
----------
[1] T. A. Titlebaum, "Time-frequency hop signals, part I: coding based upon
    the theory of linear congruences", IEEE Trans. Aerospace and Electronic
    Systems 17(4), 1981; A. A. Shaar and P. A. Davies, "A survey of
    one-coincidence sequences for frequency-hopped spread-spectrum systems",
    IEE Proceedings F 131(7), 1984.
[2] W. C. Jakes (ed.), "Microwave Mobile Communications", Wiley, 1974, ch. 1
    (see `cohop.stats.hopping`).
[3] D. Konig, "Uber Graphen und ihre Anwendung auf Determinantentheorie und
    Mengenlehre", Mathematische Annalen 77, 1916: a bipartite graph's edges
    can be coloured with as many colours as its largest degree.
"""

from __future__ import annotations

import bisect
import math
import random
from dataclasses import dataclass

import numpy as np
from ortools.sat.python import cp_model

from cohop import cpsat
from cohop.deadline import Budget, Deadline
from cohop.prepare import PreparedSite
from cohop.stats import hopping

#: Steps the spacing repair may take at most over all components of a site, shared among them by their
#: channels held (one step: one member's order updated by one change, or one consecutive pair looked at;
#: a count, so the result is deterministic; about 0.15 s on our machines).
RESPACE_WORK = 100_000
#: Changes tried for each consecutive pair that is too close before the repair moves on.
RESPACE_TRIES = 64
#: Pairs of positions the coincidence count of a component may enumerate at most.
FAMILY_CHECK_WORK = 1_000_000
#: Calibrated seconds of CP-SAT work per slot-aligned group (`cohop.cpsat`): 2 deterministic units.
GROUP_WORK_S = 4.0
#: Most spacing clauses a slot-aligned group's model may hold (a tiny delay spread asks for wide spacing).
GROUP_CLAUSES = 200_000


@dataclass(frozen=True)
class Sequence:
    system: int
    channels: np.ndarray  # the hop order (grid indices); its length is the period in hops
    construction: str  # "one-coincidence", "linear congruence", "orthogonal", "cyclic shift", "given", ...
    component: int  # systems building from one family share a component number
    prime: int | None = None
    member: int | None = None
    required_spacing: int = 1  # grid steps wanted between consecutive hops
    group: str | None = None  # time-base group of an aligned construction
    #: most coincidences of two members' orders at any shift (None: not counted, or no family)
    family_max_coincidences: int | None = None


def required_spacing_channels(prep: PreparedSite, rms_delay_spread_s: float) -> int:
    """Coherence bandwidth (envelope correlation 0.5) in grid steps, at least one step and at most the grid
    (a tiny delay spread asks for more than any band holds)."""
    with np.errstate(over="ignore", divide="ignore"):
        steps = hopping.coherence_bandwidth_hz(rms_delay_spread_s) / prep.spacing_hz
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


class CommonRelabelling:
    """The orders of one component: member m visits, in time order t = a_m^-1 label mod p, the channels of
    its hop set; `label` maps the component's channels to Z_p (an injection), the same for every member.

    Each member's order is kept as parallel lists (time, channel) sorted by time, and its cost is the sum
    over consecutive pairs (cyclically) of the squared shortfall below its target spacing."""

    def __init__(self, union: np.ndarray, labels: list[int], p: int, hop_sets: list[np.ndarray],
                 multipliers: list[int], spacing: int):
        self.union = [int(c) for c in union]
        self.p = p
        self.label = list(labels)
        self.spare = sorted(set(range(p)) - set(labels))
        index = {c: u for u, c in enumerate(self.union)}
        self.multiplier = list(multipliers)
        self.inverse = [pow(a, -1, p) for a in multipliers]
        self.at_label = {lab: u for u, lab in enumerate(self.label)}
        self.users: list[list[int]] = [[] for _ in self.union]
        self.target, self.times, self.chans, self.cost = [], [], [], []
        for m, hs in enumerate(hop_sets):
            us = [index[int(c)] for c in hs]
            for u in us:
                self.users[u].append(m)
            pairs = sorted(((self.inverse[m] * self.label[u]) % p, self.union[u]) for u in us)
            self.times.append([t for t, _ in pairs])
            self.chans.append([c for _, c in pairs])
            self.target.append(min(spacing, max(1, spacing_ceiling(hs))))
            self.cost.append(self._full_cost(m))
        self.aim = list(self.target)  # what each member aimed at first (the repair may lower `target`)
        self.cursor = [0] * len(self.chans)  # where the search for a pair too close goes on in each member

    def _pen(self, m: int, c1: int, c2: int) -> int:  # the cost of one consecutive pair
        short = self.target[m] - abs(c1 - c2)
        return short * short if short > 0 else 0

    def _full_cost(self, m: int) -> int:
        ch = self.chans[m]
        return sum(self._pen(m, ch[i - 1], ch[i]) for i in range(len(ch))) if len(ch) > 1 else 0

    def order(self, m: int) -> np.ndarray:
        return np.array(self.chans[m], dtype=np.int64)

    def min_gap(self, m: int) -> int:
        ch = self.chans[m]
        return min(abs(ch[i - 1] - ch[i]) for i in range(len(ch))) if len(ch) > 1 else 0

    def _remove(self, m: int, t: int) -> int:
        """Take the hop at time t out of member m's order; returns the change of its cost."""
        times, ch = self.times[m], self.chans[m]
        i = bisect.bisect_left(times, t)
        n = len(ch)
        if n <= 3:
            del times[i], ch[i]
            before, self.cost[m] = self.cost[m], self._full_cost(m)
            return self.cost[m] - before
        target = self.target[m]
        prev, cur, nxt = ch[i - 1], ch[i], ch[(i + 1) % n]
        a, b, c = target - abs(prev - nxt), target - abs(prev - cur), target - abs(cur - nxt)
        delta = (a * a if a > 0 else 0) - (b * b if b > 0 else 0) - (c * c if c > 0 else 0)
        self.cost[m] += delta
        del times[i], ch[i]
        return delta

    def _insert(self, m: int, t: int, channel: int) -> int:
        """Put `channel` into member m's order at time t; returns the change of its cost."""
        times, ch = self.times[m], self.chans[m]
        i = bisect.bisect_left(times, t)
        n = len(ch)
        if n < 3:
            times.insert(i, t)
            ch.insert(i, channel)
            before, self.cost[m] = self.cost[m], self._full_cost(m)
            return self.cost[m] - before
        target = self.target[m]
        prev, nxt = ch[i - 1], ch[i % n]
        a, b, c = target - abs(prev - channel), target - abs(channel - nxt), target - abs(prev - nxt)
        delta = (a * a if a > 0 else 0) + (b * b if b > 0 else 0) - (c * c if c > 0 else 0)
        self.cost[m] += delta
        times.insert(i, t)
        ch.insert(i, channel)
        return delta

    def _relabel(self, changes: list[tuple[int, int]]) -> tuple[int, int]:
        """Give channel u label l for each (u, l) of `changes`; returns the steps taken and the change of the
        summed cost."""
        steps = delta = 0
        p, inverse, users = self.p, self.inverse, self.users
        for u, _ in changes:
            lab = self.label[u]
            for m in users[u]:
                delta += self._remove(m, (inverse[m] * lab) % p)
                steps += 1
        for u, lab in changes:
            self.label[u] = lab
            self.at_label[lab] = u
            channel = self.union[u]
            for m in users[u]:
                delta += self._insert(m, (inverse[m] * lab) % p, channel)
                steps += 1
        return steps, delta

    def _try(self, u: int, other: int, level: bool = False) -> tuple[int | None, int]:
        """Swap the labels of channels u and `other` (an index into the union), or give u the spare label
        number -1 - other; keep the change if it lowers the cost (or, with `level`, leaves it as it is).
        Returns (the change of the cost if kept, else None; steps)."""
        if other >= 0:
            changes = [(u, self.label[other]), (other, self.label[u])]
            undo = [(u, self.label[u]), (other, self.label[other])]
        else:
            changes, undo = [(u, self.spare[-1 - other])], [(u, self.label[u])]
        steps, delta = self._relabel(changes)
        if delta < 0 or (level and delta == 0):
            if other < 0:
                self.spare[-1 - other] = undo[0][1]
                del self.at_label[undo[0][1]]
            return delta, steps
        steps += self._relabel(undo)[0]
        if other < 0:
            del self.at_label[changes[0][1]]
        return None, steps

    def _lands_well(self, m: int, u: int, lab: int) -> bool:
        """Would channel u, given label `lab`, sit at least the target away from its new neighbours in member
        m's order (the rest of the order as it is, u's old place left out)? A cheap screen of a change."""
        times, ch = self.times[m], self.chans[m]
        n = len(ch)
        if n < 4:
            return True
        t_old = (self.inverse[m] * self.label[u]) % self.p
        i = bisect.bisect_left(times, (self.inverse[m] * lab) % self.p)
        prev, nxt = (i - 1) % n, i % n
        if times[prev] == t_old:
            prev = (prev - 1) % n
        if times[nxt] == t_old:
            nxt = (nxt + 1) % n
        c, target = self.union[u], self.target[m]
        return abs(c - ch[prev]) >= target and abs(c - ch[nxt]) >= target

    def _screen(self, u: int, other: int) -> bool:
        """Does every moved channel land well in every member that visits it (see `_lands_well`)?"""
        lab = self.label[other] if other >= 0 else self.spare[-1 - other]
        if not all(self._lands_well(k, u, lab) for k in self.users[u]):
            return False
        return other < 0 or all(self._lands_well(k, other, self.label[u]) for k in self.users[other])

    def _next_close(self, m: int) -> tuple[int, int]:
        """The next consecutive pair of member m closer than its target, from where the last search stopped
        (cyclically): its later hop's index, and how many pairs were looked at."""
        ch, target = self.chans[m], self.target[m]
        n = len(ch)
        start = self.cursor[m] % n
        for looked in range(1, n + 1):
            i = (start + looked - 1) % n
            if abs(ch[i - 1] - ch[i]) < target:
                self.cursor[m] = i + 1
                return i, looked
        raise AssertionError("a member with a positive cost has a pair too close")

    def repair(self, rng: random.Random, work: int = RESPACE_WORK) -> None:
        """Lower the summed cost by label changes until it is zero, no change helps, or `work` runs out:
        take a member whose order has a pair too close, the next such pair and one of its two hops,
        and try changes of that hop's label (RESPACE_TRIES, twice as many after each failure, up to every
        channel and spare label). On the first round a change is tried in full only when the moved hops land
        well (`_screen`); later any change that lowers the cost is taken, and so are changes that leave it as
        it is, as many as the component has channels between two that lower it (to cross level ground). A
        member no change helps aims one channel lower (its spacing may be out of reach), so that the others
        can still reach theirs."""
        n, spare, members = len(self.union), len(self.spare), len(self.chans)
        steps, fails, m = 0, [0] * members, 0
        most = n + spare - 1
        rounds = 2 + max(0, math.ceil(math.log2(max(1, most) / RESPACE_TRIES)))  # the last with `most` tries
        level = n
        while steps < work:
            m = next((k % members for k in range(m, m + members) if self.cost[k % members] > 0), None)
            if m is None:
                return
            if fails[m] >= rounds:  # no change helps this member: aim one channel lower, as far as 1
                self.target[m] -= 1
                self.cost[m] = self._full_cost(m)
                steps += len(self.chans[m])
                fails, level = [0] * members, n
                continue
            times = self.times[m]
            i, looked = self._next_close(m)
            steps += looked
            u = self._index_of(m, times[i - rng.randrange(2)])
            moved = False
            for attempt in range(min(RESPACE_TRIES << fails[m], most)):
                # every other try swaps with a hop of the same member (what mends its order most directly)
                other = self._index_of(m, rng.choice(times)) if attempt % 2 else rng.randrange(-spare, n)
                steps += 1
                if other == u:
                    continue
                if not fails[m]:
                    steps += len(self.users[u]) + (len(self.users[other]) if other >= 0 else 0)
                    if not self._screen(u, other):
                        continue
                delta, taken = self._try(u, other, level=fails[m] > 0 and level > 0)
                steps += taken
                if delta is not None:
                    moved = True
                    if delta < 0:
                        fails, level = [0] * members, n
                    else:
                        level -= 1
                    break
                if steps >= work:
                    return
            if not moved:
                fails[m] += 1
            m += 1

    def _index_of(self, m: int, t: int) -> int:
        """The union index of the channel member m visits at time t (label a_m t mod p)."""
        return self.at_label[(t * self.multiplier[m]) % self.p]


def _family_orders(prep: PreparedSite, hop_sets, members: list[int], seed: int, spacing: int,
                   first_component: int) -> tuple[list[Sequence], list[str]]:
    out, notes = [], []
    ids = [s.id for s in prep.site.systems]
    held = max(1, sum(hop_sets[v].size for v in members))
    for ci, comp in enumerate(_components(hop_sets, members)):
        union = np.unique(np.concatenate([hop_sets[v] for v in comp]))
        p = hopping.prime_at_least(max(2, union.size))
        rng = random.Random(f"{seed}:{ci}:{union.size}")
        labels = rng.sample(range(p), union.size)  # the common relabelling: channel -> label
        multipliers = [1 + (i % (p - 1)) if p > 2 else 1 for i in range(len(comp))]
        family = CommonRelabelling(union, labels, p, [hop_sets[v] for v in comp], multipliers, spacing)
        family.repair(rng, RESPACE_WORK * sum(hop_sets[v].size for v in comp) // held)
        orders = [family.order(m) for m in range(len(comp))]
        counted = hopping.max_coincidences_between(orders, FAMILY_CHECK_WORK)
        measured = None if counted is None else int(counted.max())
        # no deletion: [1] holds exactly, which stands in for the count when that would be too much work
        whole = union.size == p and all(hop_sets[v].size == p for v in comp) and len(comp) < p
        one = len(comp) > 1 and (measured == 1 or (measured is None and whole))
        short = [ids[v] for m, v in enumerate(comp) if orders[m].size > 1 and family.min_gap(m) < family.aim[m]]
        if short:
            shared = ("; the sequences keep one common relabelling of their family (relabelling each separately "
                      "would add coincidences between them)" if len(comp) > 1 else "")
            notes.append(f"{', '.join(short)}: consecutive hops closer than the {spacing}-channel spacing asked for "
                         f"in places{shared}; see each order's closest step")
        for m, v in enumerate(comp):
            out.append(Sequence(system=v, channels=orders[m], construction="one-coincidence" if one else
                                "linear congruence", component=first_component + ci, prime=p, member=multipliers[m],
                                required_spacing=spacing, family_max_coincidences=measured))
    return out, notes


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
        base = _family_orders(prep, hop_sets, [group[0]], seed, spacing, component)[0][0].channels
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
                    rms_delay_spread_s: float = hopping.DEFAULT_RMS_DELAY_SPREAD_S,
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
    family, family_notes = _family_orders(prep, sets, rest, seed, spacing, component)
    notes += family_notes
    for s in family:
        out[s.system] = s
    return [out[v] for v in range(prep.n_systems)], notes
