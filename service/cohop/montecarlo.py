"""Seeded Monte Carlo of hop losses, to check the analytic model.

The simulation draws the physical process, not the analytic harm: it never
calls the capture formulas (`cohop.physics.capture`), the harm tables'
levels (`cohop.harm`) or the overlap survival forms (`cohop.stats.overlap`).
From the prepared site it reads the links' excess and activity, the
victim's rejection table, fading and margin, the hop sets, and the analytic
model's truncation windows (`prep.harm.reach`, `prep.interferer_range`).

One trial is one hop of victim v:

1. Victim channel c: stratified, every channel of v's hop set gets the same
   number of trials (the uniform-hopping mean with less variance than a
   drawn channel; Wilson intervals stay conservative).
2. Time overlap: each unsynchronised source has a random phase phi in
   [0, D) and bursts [phi + j D, phi + j D + T); the packet [0, T_v) meets
   K = floor(a) + floor(b) + [x < frac(a)] + [x > 1 - frac(b)] of them,
   a = T_v / D, b = T / D, x = phi / D (the count of integers j in
   ((-T - phi) / D, (T_v - phi) / D), almost surely). Slot-aligned sources
   overlap exactly one dwell.
3. Channels: a source system's K overlapped dwells are consecutive dwells of
   a hop order, so they lie on K distinct channels of its hop set A_a (a
   window longer than the set visits every channel floor(K / N) times and a
   random subset of the rest); each dwell is active with the source's
   activity alpha. A fixed interferer's overlapped bursts are each active
   with its activity and, when active, on its own span.
4. Power: an active transmission j inside the analytic model's window
   (offset |c - c'| <= reach[v, a] for a system, c in interferer_range[v, k]
   for a fixed interferer: the documented truncation) adds g_j x_j to the
   interference, x_j = 10^(E_j / 10), E_j = excess - R_v(offset) its excess
   over v's capture threshold at its actual offset (R_v the victim's stepped
   rejection table, `cohop.harm.step_of` / `rejection_steps`), g_j = 1 for a
   steady interference link or an Exp(1) draw for a Rayleigh-faded one
   (`fading.interference`). A source's dwells add like separate
   interferers, as the analytic product over transmissions has them.
5. Wanted signal, in units of its mean: s ~ Exp(1) (Rayleigh), or
   |sqrt(K / (K + 1)) + sqrt(1 / (K + 1)) CN(0, 1)|^2 (Rician, K-factor K),
   drawn per hop; m = 10^(-M / 10), M the fade margin. The hop is lost iff
   s <= m + sum_j g_j x_j. With fading "none" the threshold model holds:
   lost iff some single active transmission in the window has E_j > 0.

Reported per system:
- `hop_loss`: P(s <= m + I), the unconditional hop loss (noise and
  interference), from the draw of s above.
- `collision`: P(s <= m + I | s > m), the interference loss among hops the
  noise alone lets through: what the evaluator calls the collision
  probability (it combines it with the fade probability as
  1 - (1 - fade)(1 - collision)). Every trial counts: a hop whose first draw
  faded gets a second draw of s given s > m (Rayleigh: m + Exp(1), the
  exponential being memoryless; Rician: physical draws kept when they
  clear m, or, when hardly any does (margins far below 0 dB), the inverse
  survival function scipy.stats.ncx2.isf; where even P(s > m) underflows,
  s* = m, the limit that far in the tail), so its trials are the hops
  simulated, as before.
- `by_source`: the same conditional loss with only that source's
  transmissions (the evaluator's standalone per-source figure).
Fading "none": s = 1, no fade; hop loss and collision coincide.

Vectorisation: trials are a (channels, block) array. A source whose window
holds at most one overlapped dwell (K <= 1) is drawn from one uniform u per
trial: K = 1 (with the share of phases that give it, item 2), active, and
on the i-th channel of A_a in one stretch of u,
so "active and inside the window [lo, hi) of sorted A_a" is a range of u
and the channel is read off u; only those trials (sparse) look up their
power. Up to `_DRAWN_OVERLAPS` dwells are drawn dwell by dwell (phase,
activity, then the channels of the active dwells without replacement, for
the trials with one). Longer windows count visits per window channel
(floor(K / N), plus one for a channel of the remaining K mod N subset, by
selection sampling), their active share Binomial(visits, alpha). A bursty
fixed interferer's active bursts are drawn one by one up to
`_DRAWN_OVERLAPS`, the k0 bursts that overlap whatever the phase at once
beyond (Binomial(k0, alpha)).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.stats import ncx2

from cohop.assess import resolve_hop_sets
from cohop.harm import rejection_steps, step_of
from cohop.prepare import PreparedSite
from cohop.stats.intervals import Z95, wilson_interval

#: Elements per working array; keeps the arrays in cache.
_BLOCK_ELEMENTS = 1 << 16
#: Windows of at most this many overlapped bursts have each burst drawn.
_DRAWN_OVERLAPS = 4
#: Rician: rounds of redrawing faded hops' wanted signals before the inverse survival function takes over ...
_REDRAW_ROUNDS = 16
#: ... and the least share of draws clearing the noise for which redrawing is used at all (else that function).
_MIN_ACCEPTANCE = 1.0 / 256
#: ... drawing at most this many at a time.
_MAX_DRAWS = 1 << 20


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
    collision: SimulatedRate  # interference loss among hops the noise lets through (module docstring)
    by_source: dict[str, SimulatedRate]  # the same, one source alone
    hop_loss: SimulatedRate  # noise and interference together: P(s <= m + I)


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


def _bits(bitgen, shape) -> np.ndarray:
    n = int(np.prod(shape))
    return bitgen.random_raw((n + 1) // 2).view(np.uint32)[:n].reshape(shape)


# --- the victim's wanted signal -------------------------------------------------

@dataclass(frozen=True)
class _Wanted:
    model: str  # "rayleigh" | "rician" | "none"
    m: float  # 10^(-M / 10)
    k: float = 0.0  # Rician K-factor, linear


def _rician_power(gen, k: float, n: int) -> np.ndarray:
    """|sqrt(K / (K + 1)) + sqrt(1 / (K + 1)) w|^2, w ~ CN(0, 1) (unit mean)."""
    sd = math.sqrt(0.5 / (k + 1.0))
    z = gen.standard_normal((2, n))
    re = math.sqrt(k / (k + 1.0)) + sd * z[0]
    im = sd * z[1]
    return re * re + im * im


def _rician_above(gen, k: float, m: float, n: int, acceptance: float) -> np.ndarray:
    """n draws of the Rician power given that it exceeds m: physical draws, as many at a time as should yield the
    ones still wanted at the observed share `acceptance` that clears m, kept in the order drawn (rejection
    sampling); below `_MIN_ACCEPTANCE`, or for any left after `_REDRAW_ROUNDS`, the inverse survival function
    (2 (K + 1) s ~ ncx2(2, 2K))."""
    out = np.empty(n)
    done = 0
    rounds = _REDRAW_ROUNDS if acceptance >= _MIN_ACCEPTANCE else 0
    for _ in range(rounds):
        s = _rician_power(gen, k, min(int(math.ceil(1.25 * (n - done) / acceptance)) + 16, _MAX_DRAWS))
        s = s[s > m][:n - done]
        out[done:done + s.size] = s
        done += s.size
        if done == n:
            return out
    scale = 2.0 * (k + 1.0)
    above = float(ncx2.sf(scale * m, 2, 2.0 * k))
    if above > 0.0:
        u = 1.0 - gen.random(n - done)  # (0, 1]
        out[done:] = ncx2.isf(u * above, 2, 2.0 * k) / scale
    else:  # P(s > m) underflows: the excess over m given s > m shrinks to 0 that far in the tail (its limit)
        out[done:] = m
    return out


def _wanted_slack(gen, wanted: _Wanted, n: int) -> tuple[np.ndarray, np.ndarray | None]:
    """(slack, faded): slack = s* - m, s* the hop's wanted power given that it clears the noise (the hop is lost to
    interference I iff slack < I); faded: the hops whose unconditional draw s did not clear the noise (None for
    fading "none": slack 0, each transmission then contributes [E > 0])."""
    if wanted.model == "none":
        return np.zeros(n), None
    if wanted.model == "rayleigh":
        s = gen.standard_exponential(n)
        faded = s <= wanted.m
        slack = s - wanted.m
        count = int(np.count_nonzero(faded))
        if count:
            slack[faded] = gen.standard_exponential(count)  # s given s > m is m + Exp(1)
        return slack, faded
    if wanted.model == "rician":
        s = _rician_power(gen, wanted.k, n)
        faded = s <= wanted.m
        count = int(np.count_nonzero(faded))
        if count:
            s[faded] = _rician_above(gen, wanted.k, wanted.m, count, 1.0 - count / n)
        return s - wanted.m, faded
    raise ValueError(f"unknown fading model {wanted.model!r}")


# --- sources --------------------------------------------------------------------

#: A source system's power is tabulated per (victim channel, source channel) up to this many entries, else looked
#: up by offset per transmission (memory stays linear in the hop sets).
_TABLE_ENTRIES = 1 << 18


@dataclass(frozen=True)
class _Source:
    """One source as seen by one victim.

    Power of one active transmission on the source's j-th channel when the victim is on its i-th channel: in units
    of the capture threshold, 10^(E / 10), or [E > 0] for fading "none"; 0 outside the window (`at`). Source
    systems index j over their sorted hop set (`size` = N), fixed interferers have one column (their span).
    `lo`, `hi` (N_v,): the window's columns per victim channel.
    """

    id: str
    path: str  # "single" | "dwells" | "visits" | "bursts"
    size: int
    lo: np.ndarray  # (N_v,) int
    hi: np.ndarray  # (N_v,) int
    activity: float
    faded_link: bool  # g ~ Exp(1) per transmission (else 1)
    flat: np.ndarray | None  # (N_v * N,) power by victim channel and source channel, row-major; None: by offset
    by_offset: np.ndarray | None = None  # (C,) power at grid offset d (systems)
    victim_channels: np.ndarray | None = None  # (N_v,) grid channels
    source_channels: np.ndarray | None = None  # (N,) grid channels
    base: int = 1  # overlapped bursts whatever the phase: floor(a) + floor(b), or 1 aligned / continuous
    phase_lo: int | None = None  # uint32 threshold of [x < frac(a)]; None: no phase (K = base)
    phase_hi: int | None = None  # uint32 threshold of [x > 1 - frac(b)]
    max_overlaps: int = 1
    once: float = 1.0  # "single" path: P(K = 1)

    def at(self, row: np.ndarray, j) -> np.ndarray:
        """Power of a transmission on channel index j (array or int) for victim channel index row (array)."""
        if self.flat is not None:
            return self.flat[row * self.size + j]
        return self.by_offset[np.abs(self.victim_channels[row] - self.source_channels[j])]


def _phase(victim_t: float, burst_s: float, period_s: float) -> dict:
    """The overlap geometry of an unsynchronised source (module docstring, item 2)."""
    a, b = victim_t / period_s, burst_s / period_s
    fa, fb = a - math.floor(a), b - math.floor(b)
    base = math.floor(a) + math.floor(b)
    top = max(base, math.ceil(a + b))
    # P(K = base + 1) when K <= 1: the phases in [0, frac(a)) or (1 - frac(b), 1)
    once = 1.0 if base == 1 else min(1.0, fa + fb)
    return {"base": base, "phase_lo": int(_u32(fa)), "phase_hi": int(_u32(1.0 - fb)), "max_overlaps": top,
            "once": once}


def _transmission_power(victim, wanted: _Wanted, excess_db: float, offsets_hz: np.ndarray,
                        inside: np.ndarray) -> np.ndarray:
    """10^((E - R_v(offset)) / 10) inside the window, 0 outside; for fading "none" [E - R_v(offset) > 0]."""
    _, rejection = rejection_steps(victim)
    e = excess_db - rejection[step_of(victim, offsets_hz)]
    if wanted.model == "none":
        p = (e > 0.0).astype(float)
    else:
        with np.errstate(over="ignore"):
            p = np.power(10.0, e / 10.0)
    return np.where(inside, p, 0.0)


def _faded_link(victim, wanted: _Wanted) -> bool:
    """g ~ Exp(1) per transmission: a Rayleigh-faded interference link at a faded victim (fading "none" judges
    each transmission on its median level)."""
    return wanted.model != "none" and victim.fading.interference == "rayleigh"


def _system_source(prep: PreparedSite, v: int, a: int, channels: np.ndarray, hop_sets,
                   wanted: _Wanted) -> _Source | None:
    link, reach = prep.links[v][a], int(prep.harm.reach[v, a])
    other = hop_sets[a]
    if link is None or reach < 0 or other.size == 0:
        return None
    lo = np.searchsorted(other, channels - reach, side="left")
    hi = np.searchsorted(other, channels + reach, side="right")
    if not np.any(hi > lo):
        return None
    victim, src = prep.site.systems[v], prep.site.systems[a]
    d = np.arange(prep.n_channels)
    by_offset = _transmission_power(victim, wanted, link.excess_db, d * prep.spacing_hz, d <= reach)
    flat = None
    if channels.size * other.size <= _TABLE_ENTRIES:
        flat = by_offset[np.abs(channels[:, None] - other[None, :])].ravel()
    common = {"id": src.id, "size": int(other.size), "lo": lo, "hi": hi, "activity": float(link.activity_fraction),
              "faded_link": _faded_link(victim, wanted), "flat": flat, "by_offset": by_offset,
              "victim_channels": channels, "source_channels": other}
    geometry = {} if link.aligned else _phase(victim.packet_airtime_s, src.packet_airtime_s, src.dwell_s)
    top = geometry.get("max_overlaps", 1)
    path = "single" if top <= 1 else ("dwells" if top <= min(_DRAWN_OVERLAPS, other.size) else "visits")
    return _Source(path=path, **common, **geometry)


def _interferer_source(prep: PreparedSite, v: int, k: int, channels: np.ndarray, wanted: _Wanted) -> _Source | None:
    link = prep.interferer_links[v][k]
    first, last = prep.interferer_range[v, k]
    inside = (channels >= first) & (channels < last)
    if not inside.any():
        return None
    itf, victim = prep.site.interferers[k], prep.site.systems[v]
    f = prep.centres_hz[channels]
    offsets = np.maximum(0.0, np.maximum(itf.low_hz - f, f - itf.high_hz))  # from the span's nearest edge
    power = _transmission_power(victim, wanted, link.excess_db, offsets, inside)
    common = {"id": itf.id, "size": 1, "lo": np.zeros(channels.size, dtype=np.int64),
              "hi": inside.astype(np.int64), "activity": float(link.activity_fraction),
              "faded_link": _faded_link(victim, wanted), "flat": power}
    if itf.burst_s is None:
        return _Source(path="single", **common)
    geometry = _phase(victim.packet_airtime_s, itf.burst_s, itf.period_s)
    return _Source(path="single" if geometry["max_overlaps"] <= 1 else "bursts", **common, **geometry)


# --- drawing one source's interference for a block ------------------------------------

def _extra(bitgen, shape, src: _Source) -> np.ndarray | None:
    """Bursts overlapped beyond `base` (0, 1 or 2, by the phase), int8; None without a phase."""
    if src.phase_lo is None:
        return None
    x = _bits(bitgen, shape)
    extra = (x < src.phase_lo).view(np.int8)
    extra += (x > src.phase_hi).view(np.int8)
    return extra


def _single(bitgen, shape, src: _Source, cache: dict) -> tuple[np.ndarray, np.ndarray]:
    """K <= 1 (module docstring): one uniform per trial, split as P(K = 1) alpha / N per channel of A_a.
    Returns (flat positions, power of the one transmission there)."""
    width = src.once * src.activity / src.size
    if width <= 0.0:
        return np.zeros(0, dtype=np.intp), np.zeros(0)
    if "thr" not in cache:
        lo_thr = np.ceil(src.lo * width * _SCALE)
        hi_thr = np.minimum(np.ceil(src.hi * width * _SCALE), _SCALE - 1)
        cache["thr"] = (lo_thr.astype(np.uint32)[:, None], (hi_thr - lo_thr).astype(np.uint32)[:, None],
                        bool(np.all(lo_thr == 0)))
    lo_thr, span, from_zero = cache["thr"]
    u = _bits(bitgen, shape)
    hit = (u < span) if from_zero else ((u - lo_thr) < span)
    pos = np.flatnonzero(hit)
    row = pos // shape[1]
    j = (u.ravel()[pos] * (1.0 / (width * _SCALE))).astype(np.intp)
    np.minimum(j, src.size - 1, out=j)
    return pos, src.at(row, j)


def _distinct_channels(bitgen, n: int, size: int, taken: list[np.ndarray], act: np.ndarray) -> np.ndarray:
    """For n trials, a channel index of [0, size) uniform among those not in `taken` (earlier active dwells, -1
    none), where `act`; -1 elsewhere. Redraws on a repeat, so the draw is uniform over the rest."""
    out = np.full(n, -1, dtype=np.intp)
    todo = np.flatnonzero(act)
    while todo.size:
        j = (_bits(bitgen, (todo.size,)) * (size / _SCALE)).astype(np.intp)
        np.minimum(j, size - 1, out=j)
        clash = np.zeros(todo.size, dtype=bool)
        for t in taken:
            clash |= t[todo] == j
        out[todo[~clash]] = j[~clash]
        todo = todo[clash]
    return out


def _dwells(bitgen, gen, shape, src: _Source) -> tuple[np.ndarray, np.ndarray]:
    """Up to `_DRAWN_OVERLAPS` dwells on distinct channels of A_a, drawn dwell by dwell: the phase and each dwell's
    activity densely, then, for the trials with an active dwell, the active dwells' channels without
    replacement. Returns (flat positions, the source's interference there)."""
    extra = _extra(bitgen, shape, src)
    thr = int(_u32(src.activity))
    active = []
    for j in range(src.max_overlaps):
        on = _bits(bitgen, shape) < thr
        if j >= src.base:
            on &= extra > (j - src.base)
        active.append(on.ravel())
    anyone = active[0].copy()
    for on in active[1:]:
        anyone |= on
    pos = np.flatnonzero(anyone)
    row = pos // shape[1]
    total = np.zeros(pos.size)
    taken: list[np.ndarray] = []
    for on in active:
        act = on[pos]
        j = _distinct_channels(bitgen, pos.size, src.size, taken, act)
        taken.append(j)
        p = np.where(act, src.at(row, np.maximum(j, 0)), 0.0)
        if src.faded_link:
            p *= gen.standard_exponential(pos.size)
        total += p
    keep = total > 0
    return pos[keep], total[keep]


def _visits(bitgen, gen, shape, src: _Source) -> np.ndarray:
    """Windows of many dwells: each window channel of A_a is visited floor(K / N) times, plus once if it is in
    the random (K mod N)-subset of the rest (selection sampling over the window channels first), each visit
    active with alpha. Returns the source's interference, dense (flat)."""
    n_ch = src.size
    extra = _extra(bitgen, shape, src)
    k = np.full(shape, src.base, dtype=np.int64)
    if extra is not None:
        k += extra
    full, rest = np.divmod(k, n_ch)
    rest = rest.astype(float)
    h = (src.hi - src.lo)[:, None]
    rows = np.arange(shape[0])
    total = np.zeros(shape)
    for i in range(int(h.max())):
        valid = i < h  # (N_v, 1)
        col = np.minimum(src.lo + i, n_ch - 1)
        p = np.where(valid[:, 0], src.at(rows, col), 0.0)[:, None]
        u = _bits(bitgen, shape) * (1.0 / _SCALE)
        chosen = (u * (n_ch - i) < rest) & valid
        rest -= chosen
        visits = full + chosen
        on = visits if src.activity >= 1.0 else gen.binomial(visits, src.activity)
        total += _summed(gen, on, p, src.faded_link)
    return total.ravel()


def _summed(gen, count: np.ndarray, power, faded_link: bool) -> np.ndarray:
    """The interference of `count` active transmissions of power `power` each: count x power for a steady link,
    Gamma(count) x power (a sum of count Exp(1)) for a Rayleigh-faded one."""
    if faded_link:
        return gen.standard_gamma(count.astype(float)) * power
    return count * power


def _bursts(bitgen, gen, shape, src: _Source) -> tuple[np.ndarray, np.ndarray]:
    """A bursty fixed interferer: its overlapped bursts each active with alpha, all on its span. Returns (flat
    positions, interference there)."""
    extra = _extra(bitgen, shape, src)
    thr = int(_u32(src.activity))
    first = 0
    if src.base > _DRAWN_OVERLAPS:
        count = gen.binomial(src.base, src.activity, size=shape)
        first = src.base
    else:
        count = np.zeros(shape, dtype=np.int64)
    for j in range(first, src.max_overlaps):
        on = _bits(bitgen, shape) < thr
        if j >= src.base:
            on &= extra > (j - src.base)
        count += on
    count *= (src.hi > 0)[:, None]
    pos = np.flatnonzero(count)
    row = pos // shape[1]
    power = src.at(row, 0)
    return pos, _summed(gen, count.ravel()[pos], power, src.faded_link)


# --- one victim -------------------------------------------------------------------

def _wanted_of(prep: PreparedSite, v: int) -> _Wanted:
    f = prep.site.systems[v].fading
    m = 10.0 ** (-float(prep.fade_margin_db[v]) / 10.0)
    k = 0.0 if f.k_factor_db is None else 10.0 ** (float(f.k_factor_db) / 10.0)
    return _Wanted(f.model, m, k)


def _simulate_system(prep: PreparedSite, v: int, hop_sets, trials: int, bitgen) -> SystemSimulation:
    gen = np.random.Generator(bitgen)
    channels = hop_sets[v]
    n_ch = channels.size
    wanted = _wanted_of(prep, v)
    sources = [s for a in range(prep.n_systems) if (s := _system_source(prep, v, a, channels, hop_sets, wanted))]
    sources += [s for k in range(len(prep.site.interferers))
                if (s := _interferer_source(prep, v, k, channels, wanted))]
    caches: list[dict] = [{} for _ in sources]
    per_channel = max(1, math.ceil(trials / n_ch))
    block = max(1, min(per_channel, _BLOCK_ELEMENTS // n_ch))
    counts = [0] * len(sources)
    hits = lost = done = 0
    while done < per_channel:
        b = min(block, per_channel - done)
        shape = (n_ch, b)
        slack, faded = _wanted_slack(gen, wanted, n_ch * b)
        interference = np.zeros(n_ch * b)
        for i, (src, cache) in enumerate(zip(sources, caches)):
            if src.path == "visits":
                mine = _visits(bitgen, gen, shape, src)
                counts[i] += int(np.count_nonzero(slack < mine))
                interference += mine
                continue
            if src.path == "single":
                pos, power = _single(bitgen, shape, src, cache)
                if src.faded_link:
                    power = power * gen.standard_exponential(power.size)
            elif src.path == "dwells":
                pos, power = _dwells(bitgen, gen, shape, src)
            else:
                pos, power = _bursts(bitgen, gen, shape, src)
            counts[i] += int(np.count_nonzero(slack[pos] < power))
            interference[pos] += power  # positions are distinct within one source
        collided = slack < interference
        hits += int(np.count_nonzero(collided))
        if faded is None:
            lost += int(np.count_nonzero(collided))
        else:  # lost: faded, or cleared the noise (slack is then that draw's) but not the interference
            lost += int(np.count_nonzero(faded)) + int(np.count_nonzero(collided & ~faded))
        done += b
    n = n_ch * per_channel
    return SystemSimulation(id=prep.site.systems[v].id, collision=SimulatedRate(hits, n),
                            by_source={s.id: SimulatedRate(c, n) for s, c in zip(sources, counts)},
                            hop_loss=SimulatedRate(lost, n))


def simulate_site(prep: PreparedSite, trials_per_system: int, seed: int = 0,
                  hop_sets: list[np.ndarray] | None = None) -> SiteSimulation:
    """Simulate every system's per-hop collision and hop-loss probabilities on `hop_sets`, resolved
    (`cohop.assess.resolve_hop_sets`: sorted arrays); None: the site's own, resolved here."""
    sets = hop_sets if hop_sets is not None else resolve_hop_sets(prep)[0]
    bitgen = np.random.SFC64(seed)
    systems = tuple(_simulate_system(prep, v, sets, trials_per_system, bitgen) for v in range(prep.n_systems))
    return SiteSimulation(seed=seed, trials_per_system=trials_per_system, systems=systems)
