"""Seeded Monte Carlo of hop collisions, to check the analytic model.

The simulation draws the physical process rather than the analytic
distributions: for each trial, the victim's packet occupies [0, T_v) on a
channel of its hop set; each unsynchronised source has a random phase phi in
[0, D) and bursts [phi + m D, phi + m D + T) for integer m, and the bursts
that intersect the packet are counted from that geometry. A source system's
K overlapped dwells are consecutive dwells of a hop order, so they lie on K
distinct channels of its hop set (a window longer than the set visits each
channel floor(K / N) times and a random subset of the rest): the number J of
them inside the victim's harmful window is drawn as
floor(K / N) h + Hypergeometric(h, N - h, K mod N), and each is independently
active (share alpha): the hop is hit when Binomial(J, alpha) > 0. A fixed
interferer's overlapped bursts are each independently active and, when
active, on its own span. Harmful windows are the analytic model's (the MC
checks the statistics, not the physics). Slot-aligned sources overlap
exactly one burst.

Victim channels are stratified: every channel of the hop set gets the same
number of trials, which estimates the uniform-hopping mean with less variance
than drawing the channel. Confidence intervals are Wilson score intervals
(conservative under stratification).

Vectorisation: trials are laid out as a (channels, block) array, so the
per-channel hit thresholds broadcast instead of being gathered. One uniform
u decides both activity and channel: active iff u < alpha, and then
floor(u / alpha * N) is a uniform channel index, so "active and in the
window [lo, hi) of sorted hop-set indices" is alpha lo / N <= u < alpha hi / N.

Long packets against short dwells overlap many bursts (up to
`cohop.limits.MAX_OVERLAPS`). A fixed interferer's bursts are drawn one by
one up to `_DRAWN_OVERLAPS`; beyond that the k0 bursts that overlap whatever
the phase are drawn together as the number of them that hit, Binomial(k0, p)
with p the burst's hit probability on the victim's channel (the same
independent bursts, counted at once), and only the phase-dependent extra
bursts one by one, so the work does not grow with k0. A source system's
draws do not depend on K at all. The phase indicator is kept apart from k0
(0, 1 or 2 extra bursts), so no count can overflow its integer type.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from cohop.assess import resolve_hop_sets
from cohop.prepare import PreparedSite
from cohop.stats.intervals import Z95, wilson_interval

#: Elements per working array; keeps the arrays in cache.
_BLOCK_ELEMENTS = 1 << 16
#: Sources overlapping at most this many bursts whatever the phase have each burst drawn.
_DRAWN_OVERLAPS = 4


@dataclass(frozen=True)
class SimulatedRate:
    hits: int
    trials: int

    @property
    def probability(self) -> float:
        return self.hits / self.trials if self.trials else 0.0

    def interval(self, z: float = Z95) -> tuple[float, float]:
        """Wilson score interval (`cohop.stats.intervals`)."""
        return wilson_interval(self.hits, self.trials, z)


@dataclass(frozen=True)
class SystemSimulation:
    id: str
    collision: SimulatedRate
    by_source: dict[str, SimulatedRate]


@dataclass(frozen=True)
class SiteSimulation:
    seed: int
    trials_per_system: int
    systems: tuple[SystemSimulation, ...]


_SCALE = float(1 << 32)


def _u32(fraction) -> np.ndarray:
    """A probability as a uint32 threshold: bits < threshold has that probability
    (to 2^-32; a threshold of 1 is clipped to 2^32 - 1)."""
    return np.minimum(np.round(np.asarray(fraction, dtype=float) * _SCALE), _SCALE - 1).astype(np.uint32)


@dataclass(frozen=True)
class _Source:
    """One source as seen by one victim, in uint32 thresholds on random bits.

    Hit in an overlapped burst: thr_lo <= bits < thr_hi, per victim channel.
    Overlap count (unsynchronised): with x = phi / D uniform in [0, 1),
    bursts [phi + mD, phi + mD + T) meet [0, T_v) for
        K = floor(a) + floor(b) + [x < frac(a)] + [x > 1 - frac(b)],
    a = T_v / D, b = T / D, which is ceil(a - x) + ceil(b + x) - 1 (almost
    surely): the count of integers m in ((-T - phi) / D, (T_v - phi) / D).
    """

    id: str
    thr_lo: np.ndarray | None  # (N_v, 1) uint32; None: all zero
    thr_hi: np.ndarray
    base_overlaps: int  # floor(a) + floor(b); 1 for aligned or continuous sources
    phase_lo: int | None  # threshold for [x < frac(a)]; None: no phase (K = base_overlaps)
    phase_hi: int | None  # threshold for [x > 1 - frac(b)]
    max_overlaps: int  # largest possible K: ceil(a + b), or base_overlaps without a phase
    harmful: np.ndarray | None = None  # source systems: (N_v, 1) int, channels of a in v's window; else None
    size: int = 0  # source systems: N_a
    activity: float = 1.0  # source systems: alpha_a
    tables: list | None = None  # source systems with short windows: `_distinct_tables`; None: counted at once


def _phase_source(sid, thr_lo, thr_hi, victim_t: float, burst_s: float, period_s: float, **hopping) -> _Source:
    a, b = victim_t / period_s, burst_s / period_s
    base = math.floor(a) + math.floor(b)
    return _Source(sid, thr_lo, thr_hi, base, int(_u32(a - math.floor(a))), int(_u32(1.0 - (b - math.floor(b)))),
                   max(base, math.ceil(a + b)), **hopping)


def _system_source(prep: PreparedSite, v: int, a: int, channels: np.ndarray, hop_sets) -> _Source | None:
    link, w = prep.links[v][a], int(prep.window[v, a])
    other = hop_sets[a]
    if link is None or w < 0 or other.size == 0:
        return None
    lo = np.searchsorted(other, channels - w, side="left")
    hi = np.searchsorted(other, channels + w, side="right")
    if not np.any(hi > lo):
        return None
    hopping = {"harmful": (hi - lo).astype(np.int64)[:, None], "size": int(other.size),
               "activity": float(link.activity_fraction)}
    src = prep.site.systems[a]
    if link.aligned:
        out = _Source(src.id, None, None, 1, None, None, 1, **hopping)
    else:
        out = _phase_source(src.id, None, None, prep.site.systems[v].packet_airtime_s,
                            src.packet_airtime_s, src.dwell_s, **hopping)
    if out.max_overlaps <= min(_DRAWN_OVERLAPS, out.size):
        out = replace(out, tables=_distinct_tables(out))
    return out


def _interferer_source(prep: PreparedSite, v: int, k: int, channels: np.ndarray) -> _Source | None:
    link = prep.interferer_links[v][k]
    lo, hi = prep.interferer_range[v, k]
    harm = (channels >= lo) & (channels < hi)
    if not harm.any():
        return None
    itf = prep.site.interferers[k]
    thr_hi = _u32(np.where(harm, link.activity_fraction, 0.0))[:, None]
    if itf.burst_s is None:
        return _Source(itf.id, None, thr_hi, 1, None, None, 1)
    return _phase_source(itf.id, None, thr_hi, prep.site.systems[v].packet_airtime_s, itf.burst_s, itf.period_s)


def _bits(bitgen, shape) -> np.ndarray:
    n = shape[0] * shape[1]
    return bitgen.random_raw((n + 1) // 2).view(np.uint32)[:n].reshape(shape)


def _certain_hits(bitgen, shape, src: _Source) -> np.ndarray:
    """Boolean (channels, block): does any of the k0 bursts that overlap whatever the phase hit?
    Their number of hits is Binomial(k0, p), p = (thr_hi - thr_lo) / 2^32 per victim channel."""
    lo = 0 if src.thr_lo is None else src.thr_lo.astype(float)
    p = (src.thr_hi.astype(float) - lo) / _SCALE
    return np.random.Generator(bitgen).binomial(src.base_overlaps, np.broadcast_to(p, shape)) > 0


def _distinct_tables(src: _Source) -> list[tuple[np.ndarray, np.ndarray]]:
    """For the j-th overlapped dwell, per victim channel and per number s of harmful channels already visited
    (all quiet): uint32 thresholds of 'harmful' ((h - s) / (N - j)) and of 'harmful and active' (times
    alpha), shape (N_v, j + 1)."""
    h = src.harmful.astype(float)  # (N_v, 1)
    out = []
    for j in range(src.max_overlaps):
        left = np.maximum(h - np.arange(j + 1)[None, :], 0.0) / (src.size - j)
        out.append((_u32(left), _u32(src.activity * left)))
    return out


def _distinct_hits(bitgen, shape, src: _Source, extra: np.ndarray | None) -> np.ndarray:
    """Boolean (channels, block): a source system's K overlapped dwells on distinct channels (module docstring).
    Short windows draw each dwell's channel in turn from those not yet visited: one uniform u per dwell is
    'harmful' below (h - s) / (N - j) and 'harmful and active' below alpha times that, s counting the
    harmful channels visited so far. Long windows draw the count at once (`_distinct_counted`)."""
    if src.tables is None:
        return _distinct_counted(bitgen, shape, src, extra)
    tables = src.tables
    hit, seen = None, None
    for j, (harm_thr, hit_thr) in enumerate(tables):
        u = _bits(bitgen, shape)
        if seen is None:
            now, harmful = u < hit_thr, (u < harm_thr if len(tables) > 1 else None)
        else:
            now = u < np.take_along_axis(hit_thr, seen, axis=1)
            harmful = u < np.take_along_axis(harm_thr, seen, axis=1) if j + 1 < len(tables) else None
        if extra is not None and j >= src.base_overlaps:
            now &= extra > (j - src.base_overlaps)
        hit = now if hit is None else (hit | now)
        if harmful is not None:
            seen = harmful.astype(np.intp) if seen is None else seen + harmful
    return hit


def _distinct_counted(bitgen, shape, src: _Source, extra: np.ndarray | None) -> np.ndarray:
    """As `_distinct_hits`, for windows of many dwells: J = floor(K / N) h + Hypergeometric(h, N - h, K mod N)
    harmful visits, hit when Binomial(J, alpha) > 0."""
    gen = np.random.Generator(bitgen)
    k = np.full(shape, src.base_overlaps, dtype=np.int64)
    if extra is not None:
        k += extra
    full, rest = np.divmod(k, src.size)
    good = np.broadcast_to(src.harmful, shape)
    inside = gen.hypergeometric(good, src.size - good, rest) + full * good
    if src.activity >= 1.0:
        return inside > 0
    return gen.binomial(inside, src.activity) > 0


def _source_hits(bitgen, shape, src: _Source, buf: dict) -> np.ndarray:
    """Boolean (channels, block): does any overlapped burst of `src` hit?"""
    extra = None  # bursts overlapped beyond base_overlaps: 0, 1 or 2 (by the phase)
    if src.phase_lo is not None:
        x = _bits(bitgen, shape)
        extra = np.less(x, src.phase_lo, out=buf["m1"]).view(np.int8)
        extra += np.greater(x, src.phase_hi, out=buf["m2"]).view(np.int8)
    if src.harmful is not None:
        return _distinct_hits(bitgen, shape, src, extra)
    hit, first = None, 0
    if src.base_overlaps > _DRAWN_OVERLAPS:
        hit, first = _certain_hits(bitgen, shape, src), src.base_overlaps
    for j in range(first, src.max_overlaps):
        u = _bits(bitgen, shape)
        h = np.less(u, src.thr_hi, out=buf["h"])
        if src.thr_lo is not None:
            h &= np.greater_equal(u, src.thr_lo, out=buf["t"])
        if extra is not None and j >= src.base_overlaps:
            h &= np.greater(extra, j - src.base_overlaps, out=buf["t"])
        if hit is None:
            hit = h.copy() if src.max_overlaps > 1 else h
        else:
            hit |= h
    return hit


def _simulate_system(prep: PreparedSite, v: int, hop_sets, trials: int, bitgen) -> SystemSimulation:
    channels = hop_sets[v]
    n_ch = channels.size
    sources = [s for a in range(prep.n_systems) if (s := _system_source(prep, v, a, channels, hop_sets))]
    sources += [s for k in range(len(prep.site.interferers)) if (s := _interferer_source(prep, v, k, channels))]
    per_channel = max(1, math.ceil(trials / n_ch))
    block = max(1, min(per_channel, _BLOCK_ELEMENTS // n_ch))
    counts = {s.id: 0 for s in sources}
    any_hits, done = 0, 0
    while done < per_channel:
        b = min(block, per_channel - done)
        shape = (n_ch, b)
        buf = {name: np.empty(shape, bool) for name in ("m1", "m2", "h", "t")}
        hit_any = np.zeros(shape, dtype=bool)
        for src in sources:
            hit = _source_hits(bitgen, shape, src, buf)
            counts[src.id] += int(np.count_nonzero(hit))
            hit_any |= hit
        any_hits += int(np.count_nonzero(hit_any))
        done += b
    n = n_ch * per_channel
    return SystemSimulation(id=prep.site.systems[v].id, collision=SimulatedRate(any_hits, n),
                            by_source={sid: SimulatedRate(c, n) for sid, c in counts.items()})


def simulate_site(prep: PreparedSite, trials_per_system: int, seed: int = 0,
                  hop_sets: list[np.ndarray] | None = None) -> SiteSimulation:
    """Simulate every system's per-hop collision probability on `hop_sets`, resolved
    (`cohop.assess.resolve_hop_sets`: sorted arrays); None: the site's own, resolved here."""
    sets = hop_sets if hop_sets is not None else resolve_hop_sets(prep)[0]
    bitgen = np.random.SFC64(seed)
    systems = tuple(_simulate_system(prep, v, sets, trials_per_system, bitgen) for v in range(prep.n_systems))
    return SiteSimulation(seed=seed, trials_per_system=trials_per_system, systems=systems)
