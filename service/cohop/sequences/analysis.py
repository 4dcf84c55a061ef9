"""What a set of hopping sequences does: measured properties and exact aligned hits.

Everything here is computed from the sequences themselves (no uniform-hopping
assumption): equal use, consecutive spacing and the fading correlation it
leaves, direction and step variety, Hamming coincidences between systems that
share channels, the exact hit pattern of slot-aligned systems, the per-hop
rate that losing alignment gives, and the longest run of consecutive hops
another system's dwells fall inside the threshold window of.

Hit probabilities read the soft harm (`cohop.harm`): one overlapped
transmission of a at channel offset d destroys v's hop with rho(d), 0 beyond
`prep.harm.reach[v, a]`, counted per band of equal harm (`cohop.sequences.
bands`). The coincidences and the longest runs describe where channels meet
and keep the threshold windows (`prep.window`: over the capture threshold on
median levels).

A pair (victim v, source a) is listed when the two share a channel or some
channel of a lies within reach of harm of some channel of v; other pairs
cannot interact and are skipped. The figures of all pairs of one victim are
computed together from per-system channel counts (`_victim_rows`); the
longest-run search runs over all pairs at once in chunks (`longest_runs`).

Nothing walks the common period lcm(L_v, L_a): coincidences are counted per
offset class (`cohop.stats.hopping.coincidence_counts`), and the aligned hit
figures likewise: with g = gcd(L_v, L_a), slot t puts v on x[t mod L_v] and a
on y[t mod L_a], and by the Chinese remainder theorem each pair of positions
(i, j) with i = j (mod g) occurs in exactly one slot of the common period, so
position i meets the j = i (mod g), each once per period, and its harm is
the sum of their rho(|x_i - y_j|) [der].

Work is bounded whatever the request: the longest-run search looks at most
RUN_HORIZON_HOPS hops of the victim after each time offset and at most
RUN_CELLS (offset x hop) cells in all; the per-pair counts stop at
PAIR_WORK. What was cut is said in the report's notes and per pair
(`run_horizon_cut`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from cohop.prepare import PreparedSite
from cohop.sequences import bands
from cohop.sequences.construct import Sequence
from cohop.stats import hopping

#: Time offsets of the other sequence tried when looking for the longest run.
RUN_PHASES = 128
#: Most hops of the victim searched after each offset (the full search looks at two periods of both
#: sequences, which for a 10 s dwell beside a 0.1 ms one is millions of hops).
RUN_HORIZON_HOPS = 4096
#: Most (offset x hop) cells of the longest-run search over all pairs together; beyond it the offsets, then
#: the horizon, are reduced (about 0.2 s of numpy on our 2-core machines).
RUN_CELLS = 6_000_000
#: Cells per working chunk of the longest-run search (memory).
_CHUNK_CELLS = 1 << 20
#: Element steps of the per-pair counts (victim rows, aligned hits, coincidences) in all; a numpy call counts
#: as _CALL_STEPS (about 0.3 s on our machines).
PAIR_WORK = 30_000_000
_CALL_STEPS = 5_000
#: Pairs of occurrences the coincidences of all pairs at once may enumerate (beyond: pair by pair).
_ALL_PAIRS_WORK = 2_000_000
#: The shortest horizon the longest-run search is cut to when there are very many pairs.
_MIN_HORIZON_HOPS = 16
#: Cells inside the threshold window (plus positions) the exact search of equal-dwell pairs may list in all
#: (`_diagonal_runs`; about 0.15 s on our machines).
DIAGONAL_WORK = 1_000_000
#: A run that never ends (a whole cycle of the torus inside the window).
_ENDLESS = 1 << 60


@dataclass(frozen=True)
class OrderFigures:
    period_hops: int
    period_s: float
    uses_min: int  # fewest visits of a hop-set channel per period
    uses_max: int
    min_spacing_channels: int
    required_spacing_channels: int
    min_spacing_hz: float
    fading_correlation_max: float  # envelope correlation at the closest consecutive pair
    fading_correlation_mean: float
    reversal_share: float  # share of consecutive steps that change direction
    distinct_steps: int  # distinct step sizes (channels)
    looks_random: bool


@dataclass(frozen=True)
class PairFigures:
    a: int
    b: int
    shared_channels: int
    coincidences_max: int | None  # most coincidences per common period at any hop offset (equal dwell only)
    common_period_hops: int | None
    longest_run: int  # longest run of consecutive hops of a with b's dwell inside a's threshold window (any phase)
    aligned: bool
    aligned_hit_rate: float | None  # a's per-hop hit rate from b in the plan's alignment (exact, soft harm)
    unaligned_hit_rate: float  # the same sequences with a random phase (what losing alignment gives)
    run_horizon_hops: int = 0  # hops of a searched after each time offset for the longest run
    run_horizon_cut: bool = False  # fewer than two periods of both sequences searched: a longer run may exist


@dataclass
class SequenceReport:
    sequences: list[Sequence]
    orders: list[OrderFigures]
    pairs: list[PairFigures]
    family_bounds: dict[int, dict] = field(default_factory=dict)  # component -> Peng-Fan figures
    notes: list[str] = field(default_factory=list)
    reach: np.ndarray | None = None  # (S, S) bool [v, a]: a can hit v (where not counted: prep.harm.reach >= 0)


def order_figures(prep: PreparedSite, seq: Sequence, rms_delay_spread_s: float) -> OrderFigures:
    s = prep.site.systems[seq.system]
    ch = seq.channels
    n = ch.size
    _, counts = np.unique(ch, return_counts=True)
    steps = np.diff(np.concatenate([ch, ch[:1]])) if n > 1 else np.zeros(1, dtype=int)
    spacing_ch = np.abs(steps)
    df = spacing_ch * prep.spacing_hz
    r = hopping.envelope_correlation(df, rms_delay_spread_s)
    reversals, distinct, looks_random = hopping.order_statistics(ch)
    return OrderFigures(period_hops=n, period_s=n * s.dwell_s, uses_min=int(counts.min()), uses_max=int(counts.max()),
                        min_spacing_channels=int(spacing_ch.min()), required_spacing_channels=seq.required_spacing,
                        min_spacing_hz=float(df.min()), fading_correlation_max=float(r.max()),
                        fading_correlation_mean=float(r.mean()), reversal_share=reversals, distinct_steps=distinct,
                        looks_random=bool(looks_random))


# --- runs ------------------------------------------------------------------------------------------------

def longest_runs_by_row(hits: np.ndarray, row_starts: np.ndarray) -> np.ndarray:
    """Longest run of True in each row of a flat array whose rows begin at `row_starts` (ascending, the
    first 0, none empty): at each True, the distance back to the row's latest False (or to just before
    the row) is the length of the run ending there."""
    h = np.asarray(hits, dtype=bool)
    pos = np.arange(h.size)
    back = np.where(h, -1, pos)
    back[row_starts] = np.where(h[row_starts], row_starts - 1, row_starts)
    run = pos - np.maximum.accumulate(back)
    return np.maximum.reduceat(run, row_starts)


@dataclass(frozen=True)
class RunSearch:
    """The longest-run search of one pair: which offsets and how many hops after each."""

    natural_hops: int  # two periods of both sequences, in hops of the victim
    horizon_hops: int
    equal_dwell: bool
    exact: bool = False  # every offset, followed along the whole common period (`_diagonal_runs`)

    @property
    def cut(self) -> bool:
        return self.horizon_hops < self.natural_hops


def _searches(prep, v, a, lv, la, cap) -> list[RunSearch]:
    """Each pair's search: two periods of both orders (lv and la hops), at most `cap` hops of v."""
    dwell = np.array([s.dwell_s for s in prep.site.systems])
    equal = np.isclose(dwell[v], dwell[a], rtol=1e-12, atol=0.0)
    natural = 2 * np.maximum(lv, np.ceil(la * np.where(equal, 1.0, dwell[a] / dwell[v]) - 1e-9).astype(np.int64))
    return [RunSearch(int(n), int(min(n, cap)), bool(e)) for n, e in zip(natural.tolist(), equal.tolist())]


def _offsets(equal: np.ndarray, la: np.ndarray, phases: int) -> tuple[np.ndarray, np.ndarray]:
    """The offsets of a's sequence tried for every pair, as (pair of each row, c) with "a's hop at v's hop k
    is floor(k dv/da + c)": `phases` time offsets phi_q = (q L_a + 1/2) / phases dwells of a, spread evenly
    over a's period. With equal dwells a's hop is k - ceil(phi_q / d) = k - (q L_a // phases + 1): integer
    shifts, distinct for q < phases <= L_a, and every shift once when phases >= L_a."""
    count = np.where(equal, np.minimum(phases, la), phases)
    pair = np.repeat(np.arange(la.size), count)
    q = np.arange(pair.size) - np.repeat(np.cumsum(count) - count, count)
    size = la[pair]
    shift = np.where(phases >= size, q, -(q * size // phases + 1) % size)
    return pair, np.where(equal[pair], shift, -(q * size + 0.5) / phases)


def _diagonal_runs(prep: PreparedSite, v: np.ndarray, a: np.ndarray, orders: dict[int, np.ndarray],
                   work: int) -> np.ndarray:
    """Equal dwells, every time offset: longest run of v's hops during which a's dwell lies inside v's
    threshold window (-1 for the pairs past `work`; a run that never ends counts as _ENDLESS).

    With equal dwells v's hop k meets a's hop k + s for one integer s, so the pairs of positions (i, j)
    met in turn lie on the g = gcd(L_v, L_a) cycles (i, j) -> (i + 1, j + 1) of the torus, each
    lcm(L_v, L_a) long: cycle r = (j - i) mod g holds (i, j) at place t with t = i (mod L_v) and
    t + r = j (mod L_a) (Chinese remainder theorem). Only the cells inside the window
    (|x_i - y_j| <= prep.window) are listed (the work: L_v plus their number, per pair), placed on their
    cycles and sorted; runs are stretches of consecutive places, a cycle's last place joined to its first."""
    out = np.full(v.size, -1, dtype=np.int64)
    if not v.size:
        return out
    systems = sorted(orders)
    span = 3 * prep.n_channels + 2  # keys s K + channel: a window never reaches the next system's keys
    by_channel = {s: np.argsort(orders[s], kind="stable") for s in systems}
    keys = np.concatenate([s * span + orders[s][by_channel[s]] for s in systems])
    position = np.concatenate([by_channel[s] for s in systems])
    lx = np.array([orders[s].size for s in v.tolist()], dtype=np.int64)
    ly = np.array([orders[s].size for s in a.tolist()], dtype=np.int64)
    take = int(np.searchsorted(np.cumsum(lx), work, side="right"))  # the pairs whose orders fit at all
    x_pair = np.repeat(np.arange(take), lx[:take])
    x = np.concatenate([orders[s] for s in v[:take].tolist()]) if take else np.zeros(0, dtype=np.int64)
    i = _within(lx[:take])
    width = prep.window[v[:take], a[:take]][x_pair]
    lo = np.searchsorted(keys, a[x_pair] * span + x - width, side="left")
    hi = np.searchsorted(keys, a[x_pair] * span + x + width, side="right")
    per_pair = lx[:take] + np.bincount(x_pair, weights=hi - lo, minlength=take).astype(np.int64)
    take = int(np.searchsorted(np.cumsum(per_pair), work, side="right"))
    if not take:
        return out
    keep = x_pair < take
    x_pair, i, lo, hi = x_pair[keep], i[keep], lo[keep], hi[keep]
    pair = np.repeat(x_pair, hi - lo)
    i = np.repeat(i, hi - lo)
    j = position[np.repeat(lo, hi - lo) + _within(hi - lo)]
    lx, ly = lx[:take], ly[:take]
    g = np.gcd(lx, ly)
    l2 = ly // g
    inverse = np.array([pow(int(m), -1, int(n)) if n > 1 else 0 for m, n in zip(lx // g, l2)], dtype=np.int64)
    lcm = lx * l2
    stride = lcm + 1  # a gap after every cycle, so consecutive keys share a cycle
    base = np.cumsum(g * stride) - g * stride
    r = (j - i) % g[pair]
    t = i + lx[pair] * (((j - r - i) // g[pair] % l2[pair]) * inverse[pair] % l2[pair])
    key = np.sort(base[pair] + r * stride[pair] + t)
    out[:take] = 0
    if not key.size:
        return out
    owner = np.searchsorted(base, key, side="right") - 1
    starts = np.flatnonzero(np.r_[True, np.diff(key) != 1])
    ends = np.r_[starts[1:], key.size] - 1
    length = ends - starts + 1
    seg_pair = owner[starts]
    cycle_start = base[seg_pair] + (key[starts] - base[seg_pair]) // stride[seg_pair] * stride[seg_pair]
    runs = length.copy()
    wraps = np.flatnonzero(key[ends] - cycle_start == lcm[seg_pair] - 1)  # ends at the cycle's last place
    if wraps.size:
        m = np.searchsorted(key, cycle_start[wraps])  # the cycle's first key: its first place, if harmful
        at_first = key[m] == cycle_start[wraps]
        other = np.searchsorted(starts, m, side="right") - 1
        whole = at_first & (other == wraps)
        joined = at_first & ~whole
        runs[wraps[joined]] += length[other[joined]]
        runs[wraps[whole]] = _ENDLESS
    np.maximum.at(out, seg_pair, runs)
    return out


def _within(counts: np.ndarray) -> np.ndarray:
    """0, 1, ..., counts[k] - 1 for every k, end to end."""
    return np.arange(int(counts.sum())) - np.repeat(np.cumsum(counts) - counts, counts)


def longest_runs(prep: PreparedSite, pairs: list[tuple[int, int]], orders: dict[int, np.ndarray],
                 phases: int = RUN_PHASES, cells: int = RUN_CELLS) -> tuple[np.ndarray, list[RunSearch], int]:
    """Longest run of v's consecutive hops during which a's dwell is on a channel inside v's threshold window
    (`prep.window`, where a is over v's capture threshold on median levels; a faded hop may be lost further
    out, with the soft harm of `cohop.harm`), for every (v, a) in `pairs` (whether a transmits then, and
    whether it destroys the hop, is left to chance), at most two periods of both
    orders. Pairs of equal dwells are searched exactly over every offset while DIAGONAL_WORK lasts
    (`_diagonal_runs`); the others over `phases` time offsets spread evenly across a's period and at most
    RUN_HORIZON_HOPS hops after each, in at most `cells` (offset x hop) cells in all: the offsets are
    reduced first, then the horizon (not below _MIN_HORIZON_HOPS). Returns the runs, each pair's search
    and the offsets used."""
    if not pairs:
        return np.zeros(0, dtype=np.int64), [], phases
    v = np.array([p[0] for p in pairs])
    a = np.array([p[1] for p in pairs])
    lv = np.array([orders[i].size for i in v.tolist()])
    la = np.array([orders[i].size for i in a.tolist()])
    full = _searches(prep, v, a, lv, la, 2**62)
    natural = np.array([s.natural_hops for s in full])
    equal = np.array([s.equal_dwell for s in full])
    runs = np.zeros(len(pairs), dtype=np.int64)
    same = np.flatnonzero(equal)
    exact = np.zeros(len(pairs), dtype=bool)
    if same.size:
        found = _diagonal_runs(prep, v[same], a[same], orders, DIAGONAL_WORK)
        exact[same] = found >= 0
        runs[same] = np.maximum(found, 0)
    sampled = ~exact

    def total(ph: int, cap: int) -> int:
        return int((np.minimum(natural, cap) * np.where(equal, np.minimum(ph, la), ph))[sampled].sum())

    cap = RUN_HORIZON_HOPS
    if total(phases, cap) > cells:
        lo, hi = 1, phases  # the most offsets that fit (the total grows with them)
        while lo < hi:
            mid = (lo + hi + 1) // 2
            lo, hi = (mid, hi) if total(mid, cap) <= cells else (lo, mid - 1)
        phases = lo
        while total(phases, cap) > cells and cap > _MIN_HORIZON_HOPS:
            cap = max(_MIN_HORIZON_HOPS, cap // 2)
    searches = [RunSearch(s.natural_hops, s.natural_hops, True, True) if e else
                RunSearch(s.natural_hops, min(s.natural_hops, cap), s.equal_dwell) for s, e in zip(full, exact)]
    rest = np.flatnonzero(sampled)
    row_pair, row_offset = _offsets(equal[rest], la[rest], phases)
    row_pair = rest[row_pair]
    geometry = _PairGeometry.of(prep, v, a, orders, searches)
    width = _bucket(geometry.horizon[row_pair])
    equal_row = equal[row_pair]
    for w in np.unique(width).tolist():
        for shifts in (True, False):  # integer shifts and fractional offsets apart
            rows = np.flatnonzero((width == w) & (equal_row == shifts))
            per_chunk = max(1, _CHUNK_CELLS // w)
            for c in range(0, rows.size, per_chunk):
                part = rows[c:c + per_chunk]
                np.maximum.at(runs, row_pair[part], geometry.runs(row_pair[part], row_offset[part], w))
    return np.minimum(runs, geometry.horizon), searches, phases


def _bucket(hops: np.ndarray) -> np.ndarray:
    """`hops` rounded up to three significant bits (at most 1/8 more), so that rows of similar horizons
    are searched together as one rectangle."""
    hops = np.maximum(np.asarray(hops, dtype=np.int64), 1)
    shift = np.maximum(np.floor(np.log2(hops)).astype(np.int64) - 3, 0)
    return ((hops + (1 << shift) - 1) >> shift) << shift


@dataclass(frozen=True)
class _PairGeometry:
    """Per pair of the longest-run search: where each order lies in one flat array of channels, the step of
    a's hop index per hop of v, the threshold window and the horizon."""

    channels: np.ndarray
    x_first: np.ndarray
    x_size: np.ndarray
    y_first: np.ndarray
    y_size: np.ndarray
    step: np.ndarray
    width: np.ndarray
    horizon: np.ndarray

    @classmethod
    def of(cls, prep, v: np.ndarray, a: np.ndarray, orders, searches) -> "_PairGeometry":
        systems = sorted(orders)
        first = np.zeros(prep.n_systems, dtype=np.int64)
        size = np.zeros(prep.n_systems, dtype=np.int64)
        size[systems] = [orders[s].size for s in systems]
        first[systems] = np.cumsum(size[systems]) - size[systems]
        channels = np.concatenate([orders[s] for s in systems]).astype(np.int32)
        dwell = np.array([s.dwell_s for s in prep.site.systems])
        equal = np.array([s.equal_dwell for s in searches])
        return cls(channels=channels, x_first=first[v], x_size=size[v], y_first=first[a], y_size=size[a],
                   step=np.where(equal, 1.0, dwell[v] / dwell[a]), width=prep.window[v, a],
                   horizon=np.array([s.horizon_hops for s in searches]))

    def runs(self, pair: np.ndarray, offset: np.ndarray, hops: int) -> np.ndarray:
        """Longest run of every row (pair, offset) over `hops` hops (at least every row's horizon), all rows
        at once: v's hop k meets a's hop floor(k step + offset) mod L_a (k + offset, an integer, when the
        dwells are equal)."""
        k = np.arange(hops, dtype=np.int32)[None, :]
        pairs, local = np.unique(pair, return_inverse=True)
        x_tiles = self.channels[(self.x_first[pairs][:, None] + k % self.x_size[pairs][:, None]).astype(np.int64)]
        xv = x_tiles[local]  # v's channels, each pair's order tiled once and shared by its rows
        ly = self.y_size[pair][:, None].astype(np.int32)
        if np.all(self.step[pair] == 1.0) and np.all(offset == np.round(offset)):
            at = (k + offset[:, None].astype(np.int32)) % ly
        else:
            t = np.multiply(k, self.step[pair][:, None])
            t += offset[:, None]
            at = np.floor(t, out=t).astype(np.int64) % ly
        at += self.y_first[pair][:, None].astype(at.dtype)
        hit = np.abs(xv - self.channels[at]) <= self.width[pair][:, None]
        if np.any(self.horizon[pair] < hops):
            hit &= k < self.horizon[pair][:, None]
        back = np.maximum.accumulate(np.where(hit, np.int32(-1), k), axis=1)
        np.subtract(k, back, out=back)
        return back.max(axis=1)


# --- pair counts -----------------------------------------------------------------------------------------

class _Work:
    """A count of element steps that may still be spent."""

    def __init__(self, limit: int):
        self.left = limit
        self.refused = 0

    def take(self, units: int) -> bool:
        if units > self.left:
            self.refused += 1
            return False
        self.left -= units
        return True


@dataclass(frozen=True)
class _Channels:
    """Per system with a sequence: how often it visits each grid channel, and running totals of that."""

    counts: np.ndarray  # (S, C) visits per period
    cumulative: np.ndarray  # (S, C + 1): visits to channels below c
    lengths: np.ndarray  # (S,) period in hops (0: no sequence)

    @classmethod
    def of(cls, prep: PreparedSite, orders: dict[int, np.ndarray]) -> "_Channels":
        counts = np.zeros((prep.n_systems, prep.n_channels), dtype=np.int32)
        for v, order in orders.items():
            counts[v] = np.bincount(order, minlength=prep.n_channels)
        cumulative = np.zeros((prep.n_systems, prep.n_channels + 1), dtype=np.int64)
        np.cumsum(counts, axis=1, out=cumulative[:, 1:])
        lengths = counts.sum(axis=1)
        return cls(counts, cumulative, lengths)


def _visits_within(table: _Channels, v_channels: np.ndarray, sources: np.ndarray, width: np.ndarray) -> np.ndarray:
    """(A, D): visits per period of source sources[i] to channels within width[i] of v_channels[d] (0 where
    the width is negative)."""
    n = table.counts.shape[1]
    w = np.asarray(width)[:, None]
    lo = np.clip(v_channels[None, :] - w, 0, n)
    hi = np.clip(v_channels[None, :] + w + 1, 0, n)
    rows = sources[:, None]
    return np.where(w >= 0, table.cumulative[rows, hi] - table.cumulative[rows, lo], 0)


def _victim_bands(prep: PreparedSite, table: _Channels, v: int, sources: np.ndarray):
    """v's channels with a sequence, v's bands against each source and a's visits per band (A, G, D)."""
    c = np.flatnonzero(table.counts[v])
    bands_ = bands.system_bands(prep, v, sources)
    within = np.stack([_visits_within(table, c, sources, bands_.widths[:, g]) for g in range(bands_.count)], axis=1)
    return c, bands_, np.diff(within, axis=1, prepend=0)


def _overlaps(prep: PreparedSite, v: int, sources: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(k0, r) of the random-phase overlap count K of each source's dwells with v's packet."""
    systems = prep.site.systems
    airtime = np.array([systems[a].packet_airtime_s for a in sources])
    dwell = np.array([systems[a].dwell_s for a in sources])
    ratio = (systems[v].packet_airtime_s + airtime) / dwell  # random-phase overlap count (cohop.stats.overlap)
    k0 = np.floor(ratio)
    return k0.astype(np.int64), ratio - k0


def _victim_rows(prep: PreparedSite, table: _Channels, v: int, sources: np.ndarray, work: _Work):
    """For every source a of `sources`: channels shared with v, whether some channel of a lies within reach
    of harm (`prep.harm.reach`) of some channel of v, whether within v's threshold window (`prep.window`:
    the longest runs), and v's per-hop hit rate with a random phase between them: the overlapped dwells are
    consecutive, so distinct, positions of a's period, which positions averaged as a random subset, each
    destroying the hop with alpha_a rho(offset) (`bands.subset_survival`). None when `work` refuses it."""
    steps = sources.size * (int(np.count_nonzero(table.counts[v])) + 1)
    if not work.take(steps + 10 * _CALL_STEPS):
        return None
    c, bands_, counts = _victim_bands(prep, table, v, sources)
    k0, r = _overlaps(prep, v, sources)
    a_count, g_count, d_count = counts.shape
    rows = counts.transpose(0, 2, 1).reshape(-1, g_count)
    drawn = np.repeat(np.minimum(k0 + 1, np.maximum(table.lengths[sources] - 1, 0)), d_count)
    if not work.take((g_count - 1) * steps + (bands.subset_work(rows, drawn) if g_count > 1 else 0)):
        return None
    visits = table.counts[v, c].astype(float)
    shared = (table.counts[sources[:, None], c[None, :]] > 0).sum(axis=1)
    near = counts.sum(axis=1).max(axis=1) > 0
    in_window = _visits_within(table, c, sources, prep.window[v, sources]).max(axis=1) > 0
    kept = bands.subset_survival(np.repeat(k0, d_count), np.repeat(r, d_count), rows,
                                 np.repeat(bands_.hit(prep.activity[sources]), d_count, axis=0),
                                 np.repeat(table.lengths[sources], d_count))
    hit = 1.0 - kept.reshape(a_count, d_count)
    unaligned = hit @ visits / visits.sum()
    return shared, near, in_window, unaligned


def _aligned_counts(x: np.ndarray, y: np.ndarray, width: int) -> np.ndarray:
    """For each position i of x: the positions j = i (mod g) of y whose channel lies within `width` of x_i
    (each meets i once per common period, see the module docstring)."""
    g = math.gcd(x.size, y.size)
    if width < 0:
        return np.zeros(x.size, dtype=np.int64)
    x = x.astype(np.int64)
    y = y.astype(np.int64)
    span = int(max(x.max(), y.max())) + 2 * width + 2  # keys of one residue class never reach the next
    keys = np.sort((np.arange(y.size) % g) * span + y)
    base = (np.arange(x.size) % g) * span + x
    return np.searchsorted(keys, base + width, side="right") - np.searchsorted(keys, base - width, side="left")


def _aligned_harm(prep: PreparedSite, v: int, a: int, x: np.ndarray, y: np.ndarray,
                  values: np.ndarray | None = None) -> np.ndarray:
    """For each position i of x: sum of rho(|x_i - y_j|) over the positions j = i (mod g) of y it meets (once
    per common period each), from the counts within each band's width (`cohop.sequences.bands`). `values`
    (C,), complex allowed, replaces rho by offset (the joint law's transforms, equal wherever rho is)."""
    bands_ = bands.system_bands(prep, v, [a])
    harm = bands_.harm[0] if values is None else np.asarray(values)[bands_.widths[0]]
    within = np.stack([_aligned_counts(x, y, int(w)) for w in bands_.widths[0]])
    counts = bands.per_band(within)
    out = harm[0] * counts[0]
    for g in range(1, bands_.count):
        out = out + harm[g] * counts[g]
    return out


def aligned_channel_hits(prep: PreparedSite, v: int, a: int, x: np.ndarray, y: np.ndarray,
                         channels: np.ndarray, values: np.ndarray | None = None) -> np.ndarray:
    """Slot-aligned sequences: a's per-hop hit probability on each of v's `channels`, exactly, over the
    common period (slot t: v on x[t mod Lx], a on y[t mod Ly]; a transmits in a share alpha_a of slots and
    then destroys v's hop with rho(|x - y|), `cohop.harm`); `values` as `_aligned_harm`."""
    x, y = np.asarray(x), np.asarray(y)
    hits = _aligned_harm(prep, v, a, x, y, values)
    channels = np.asarray(channels)
    grid = int(max(x.max(), channels.max(initial=0))) + 1
    total = np.bincount(x, weights=np.real(hits), minlength=grid)[channels]
    if np.iscomplexobj(hits):
        total = total + 1j * np.bincount(x, weights=np.imag(hits), minlength=grid)[channels]
    slots = np.bincount(x, minlength=grid)[channels] * (y.size // math.gcd(x.size, y.size))
    alpha = prep.site.systems[a].activity_fraction
    return np.where(slots > 0, alpha * total / np.maximum(slots, 1), 0.0)


def aligned_rate(prep: PreparedSite, v: int, a: int, x: np.ndarray, y: np.ndarray) -> float:
    """Slot-aligned: exact per-hop hit rate of v from a over the common period (alpha_a times the mean harm
    of the slots)."""
    hits = _aligned_harm(prep, v, a, np.asarray(x), np.asarray(y))
    return float(prep.site.systems[a].activity_fraction * hits.sum() / math.lcm(len(x), len(y)))


# --- the report ------------------------------------------------------------------------------------------

def family_bounds(sequences: list[Sequence]) -> dict[int, dict]:
    """Peng-Fan bound for each component built from the linear-congruence family (before deletion:
    length p, p symbols), beside the most coincidences its members' orders measure at any shift
    (as sequences, whatever their dwells)."""
    out = {}
    for comp in sorted({s.component for s in sequences if s.prime is not None and s.group is None}):
        members = [s for s in sequences if s.component == comp]
        p = members[0].prime
        out[comp] = {"prime": p, "members": len(members), "peng_fan_bound": hopping.peng_fan_bound(p, len(members), p),
                     "measured_max_coincidences": members[0].family_max_coincidences}
    return out


def _coincidences(prep, seqs: dict[int, np.ndarray], pairs: list[tuple[int, int]], work: _Work) -> dict:
    """Most coincidences per common period of each pair: all pairs at once when the occurrences of shared
    channels are few enough, else pair by pair within `work`."""
    systems = sorted(seqs)
    index = {s: k for k, s in enumerate(systems)}
    counted = hopping.max_coincidences_between([seqs[s] for s in systems], _ALL_PAIRS_WORK) if pairs else None
    out = {}
    for v, a in pairs:
        if counted is not None:
            out[v, a] = int(counted[index[v], index[a]])
        elif (a, v) in out:
            out[v, a] = out[a, v]
        elif work.take(2 * (seqs[v].size + seqs[a].size) + 20 * _CALL_STEPS):
            out[v, a] = hopping.coincidences_over_common_period(seqs[v], seqs[a])[0]
    return out


def _same_rate(prep: PreparedSite, v: int, a: int) -> bool:
    return abs(prep.site.systems[v].dwell_s - prep.site.systems[a].dwell_s) < 1e-12


def analyse(prep: PreparedSite, sequences: list[Sequence], rms_delay_spread_s: float,
            notes: list[str] | None = None, run_phases: int = RUN_PHASES) -> SequenceReport:
    """`run_phases`: time offsets tried for each pair's longest run (fewer when the time limit is short)."""
    notes = list(notes or [])
    orders = [order_figures(prep, s, rms_delay_spread_s) for s in sequences]
    seqs = {s.system: np.asarray(s.channels, dtype=np.int64) for s in sequences}
    table = _Channels.of(prep, seqs)
    work = _Work(PAIR_WORK)
    systems = sorted(seqs)
    listed: list[tuple[int, int]] = []
    shared, near, in_window, unaligned = {}, {}, {}, {}
    reach = (prep.harm.reach >= 0) & ~np.eye(prep.n_systems, dtype=bool)
    skipped_victims = 0
    for v in systems:
        sources = np.array([a for a in systems if a != v], dtype=np.int64)
        if not sources.size:
            continue
        rows = _victim_rows(prep, table, v, sources, work)
        if rows is None:
            skipped_victims += 1
            continue
        sh, nr, iw, un = rows
        reach[v, sources] = nr
        for a, s_, n_, w_, u_ in zip(sources.tolist(), sh.tolist(), nr.tolist(), iw.tolist(), un.tolist()):
            if s_ or n_:
                listed.append((v, a))
                shared[v, a], near[v, a], in_window[v, a] = int(s_), bool(n_), bool(w_)
                unaligned[v, a] = float(u_) if n_ else 0.0
    aligned_hits = {}
    for v, a in listed:
        x, y = seqs[v], seqs[a]
        if prep.links[v][a].aligned and work.take(2 * (x.size + y.size) * bands.system_bands(prep, v, [a]).count
                                                  + 5 * _CALL_STEPS):
            aligned_hits[v, a] = aligned_rate(prep, v, a, x, y)
    coinc = _coincidences(prep, seqs, [(v, a) for v, a in listed if shared[v, a] and _same_rate(prep, v, a)], work)
    run_pairs = [(v, a) for v, a in listed if in_window[v, a]]
    runs, searches, phases_used = longest_runs(prep, run_pairs, seqs, run_phases)
    run_of = {pair: (int(r), s) for pair, r, s in zip(run_pairs, runs, searches)}
    pairs = []
    for v, a in listed:
        x, y = seqs[v], seqs[a]
        same = _same_rate(prep, v, a)
        count = coinc.get((v, a)) if shared[v, a] else 0
        run, search = run_of.get((v, a), (0, None))
        aligned = prep.links[v][a].aligned
        pairs.append(PairFigures(
            a=v, b=a, shared_channels=shared[v, a], coincidences_max=count if same else None,
            common_period_hops=math.lcm(x.size, y.size) if same else None, longest_run=run, aligned=aligned,
            aligned_hit_rate=aligned_hits.get((v, a)) if aligned else None, unaligned_hit_rate=unaligned[v, a],
            run_horizon_hops=search.horizon_hops if search else 0, run_horizon_cut=bool(search and search.cut)))
    notes += _work_notes(run_phases, phases_used, searches, skipped_victims, work.refused)
    return SequenceReport(sequences=sequences, orders=orders, pairs=pairs, family_bounds=family_bounds(sequences),
                          notes=notes, reach=reach)


def _work_notes(asked: int, used: int, searches: list[RunSearch], skipped_victims: int, refused: int) -> list[str]:
    out = []
    if used < asked:
        out.append(f"to bound the work, each pair's longest run was searched over {used} time offsets "
                   f"(not {asked})")
    cut = [s for s in searches if s.cut]
    if cut:
        out.append(f"the longest run of {len(cut)} pair(s) was searched over at most "
                   f"{max(s.horizon_hops for s in cut)} hops of the victim after each offset, fewer than two "
                   "periods of both sequences: a longer run may exist, and a run equal to the horizon means at "
                   "least that many hops")
    if skipped_victims:
        out.append(f"to bound the work, the pair figures of {skipped_victims} victim system(s) were left out "
                   "(the sequences are too long for that many systems)")
    if refused:
        out.append(f"to bound the work, {refused} coincidence or aligned-hit count(s) were left out (shown as "
                   "null)")
    return out
