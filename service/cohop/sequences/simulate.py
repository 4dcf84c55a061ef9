"""Sequence-driven Monte Carlo of retries: real hop orders, real timing, correlated fading.

A packet of victim v starts on a random hop of its sequence; attempt k uses
the next `hops_per_attempt` hops. Every other system keeps one random time
offset over its whole period for the packet (slot-aligned group members keep
the plan's alignment) and is active in each of its dwells independently; its
channel at any time is read from its own sequence. A hop is hit when an
overlapping active burst lies inside v's harmful window; fixed interferers
hit as in the analytic model (independently per attempt; bursty ones through
their phase, kept for the packet). Fading follows the hops: the complex gain
is AR(1) from hop to hop with magnitude sqrt(r), r the envelope correlation
at that frequency step (`cohop.stats.hopping.envelope_correlation`, after
Jakes, "Microwave Mobile Communications", 1974), since the envelope
correlation of Rayleigh fading is close to the squared magnitude of the
complex one [mem]; Rician channels add their fixed line-of-sight part. A hop
fades when the power falls below 10^(-M/10) of the mean.

Source a's dwells m that overlap v's packet starting at t0 are those with
m D_a + phi < t0 + T_v and m D_a + phi + T_a > t0, a run of consecutive m; of
them, the ones whose channel lies in v's window are counted (up to
`cohop.limits.MAX_OVERLAPS` and more, in 64-bit integers), and each is active
independently, so the hop is hit with probability 1 - (1 - alpha_a)^count.
All sources that can reach v are drawn together (their counts as one array);
a source overlapping many dwells has its counts read from running totals
along its sequence instead of dwell by dwell.

The residual loss after the retry limit is then counted directly and
reported beside p^(k+1), the independent-attempt figure from the same
simulated per-attempt loss, so their difference is the cost of correlation.
Intervals are Wilson's (`cohop.stats.intervals`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from cohop.prepare import PreparedSite
from cohop.stats import hopping
from cohop.stats.intervals import wilson_interval

#: Elements (sources x packets x hops) per working array of the source draws.
_CHUNK_ELEMENTS = 1 << 20
#: Sources whose packets overlap more dwells than this are counted from running totals.
_DRAWN_DWELLS = 8
#: Table entries (v's channels x a's period) per block of those running totals.
_TABLE_ELEMENTS = 1 << 20


@dataclass(frozen=True)
class RetryFigures:
    system: int
    packets: int
    attempt_loss: float  # simulated per-attempt loss (collision or fade)
    residual_loss: float  # simulated: every attempt lost
    residual_interval: tuple[float, float]
    independent_residual: float  # attempt_loss^(k+1)


def _fades(rng, channels_per_hop: np.ndarray, prep: PreparedSite, v: int, sigma_tau: float) -> np.ndarray:
    """(packets, hops) booleans: the hop fades. channels_per_hop holds v's channel on each hop."""
    system = prep.site.systems[v]
    if system.fading.model == "none":
        return np.zeros(channels_per_hop.shape, dtype=bool)
    n, hops = channels_per_hop.shape
    df = np.abs(np.diff(channels_per_hop, axis=1)) * prep.spacing_hz
    rho = np.sqrt(hopping.envelope_correlation(df, sigma_tau))
    g = np.empty((n, hops), dtype=complex)
    noise = (rng.standard_normal((n, hops)) + 1j * rng.standard_normal((n, hops))) / math.sqrt(2)
    g[:, 0] = noise[:, 0]
    for h in range(1, hops):
        g[:, h] = rho[:, h - 1] * g[:, h - 1] + np.sqrt(1 - rho[:, h - 1] ** 2) * noise[:, h]
    if system.fading.model == "rician":
        k = 10 ** (system.fading.k_factor_db / 10)
        g = math.sqrt(k / (k + 1)) + math.sqrt(1 / (k + 1)) * g
    threshold = 10 ** (-float(prep.fade_margin_db[v]) / 10)
    return np.abs(g) ** 2 < threshold


def reachable(prep: PreparedSite, sequences, v: int) -> np.ndarray:
    """(S,) bool: some channel of a's sequence lies inside v's harmful window of some channel of v's."""
    mine = np.unique(np.asarray(sequences[v]))
    out = np.zeros(prep.n_systems, dtype=bool)
    for a in range(prep.n_systems):
        w = int(prep.window[v, a])
        if a == v or w < 0 or sequences[a] is None:
            continue
        theirs = np.unique(np.asarray(sequences[a]))
        at = np.searchsorted(theirs, mine - w, side="left")
        out[a] = bool(np.any((at < theirs.size) & (theirs[np.minimum(at, theirs.size - 1)] <= mine + w)))
    return out


def _dwell_range(t0, phase, dwell, airtime_v, airtime_a):
    """First and last of a's dwells m whose burst [m D + phi, m D + phi + T_a) overlaps [t0, t0 + T_v)."""
    lo = np.floor((t0 - phase - airtime_a) / dwell).astype(np.int64) + 1
    hi = np.ceil((t0 + airtime_v - phase) / dwell).astype(np.int64) - 1
    return lo, hi


def _counts_drawn(seqs, sources, chan_v, lo, hi, width) -> np.ndarray:
    """(A, n, hops): dwells of each source in [lo, hi] on a channel within `width` of v's, dwell by dwell."""
    offsets = np.cumsum([0] + [seqs[a].size for a in sources[:-1]])
    flat = np.concatenate([seqs[a] for a in sources]).astype(np.int64)
    size = np.array([seqs[a].size for a in sources])[:, None, None]
    first = offsets[:, None, None]
    w = np.asarray(width)[:, None, None]
    span = hi - lo + 1
    out = np.zeros(lo.shape, dtype=np.int64)
    for j in range(int(span.max(initial=0))):
        chan_a = flat[first + (lo + j) % size]
        out += (j < span) & (np.abs(chan_a - chan_v[None]) <= w)
    return out


def _counts_from_totals(seq_a: np.ndarray, chan_v: np.ndarray, lo, hi, width: int) -> np.ndarray:
    """(n, hops): dwells m in [lo, hi] of a with |seq_a[m mod L] - chan_v| <= width, from running totals of
    each of v's channels along a's period (whole periods, then the part before and after)."""
    size = seq_a.size
    channels, which = np.unique(chan_v, return_inverse=True)
    which = which.reshape(chan_v.shape)
    count = np.maximum(hi - lo + 1, 0)
    begin = lo % size
    full, rest = count // size, count % size
    out = np.zeros(chan_v.shape, dtype=np.int64)
    block = max(1, _TABLE_ELEMENTS // (size + 1))
    for b in range(0, channels.size, block):
        mine = channels[b:b + block]
        totals = np.zeros((mine.size, size + 1), dtype=np.int64)
        np.cumsum(np.abs(seq_a[None, :] - mine[:, None]) <= width, axis=1, out=totals[:, 1:])
        cells = (which >= b) & (which < b + mine.size)
        row = which[cells] - b
        start, end = begin[cells], begin[cells] + rest[cells]
        wrapped = end > size
        part = np.where(wrapped, totals[row, size] - totals[row, start] + totals[row, np.where(wrapped, end - size, 0)],
                        totals[row, np.minimum(end, size)] - totals[row, start])
        out[cells] = full[cells] * totals[row, size] + part
    return out


def _system_hits(rng, prep: PreparedSite, v: int, seqs: dict, sources: list[int], chan_v: np.ndarray,
                 t0: np.ndarray) -> np.ndarray:
    """(packets, hops): some source in `sources` hits v's hop. Each source keeps one random time offset
    over its whole period for the packet (none when slot-aligned with v)."""
    n, hops = chan_v.shape
    lost = np.zeros((n, hops), dtype=bool)
    systems = prep.site.systems
    sv = systems[v]
    per_chunk = max(1, _CHUNK_ELEMENTS // max(1, n * hops))
    for c in range(0, len(sources), per_chunk):
        chunk = sources[c:c + per_chunk]
        dwell = np.array([systems[a].dwell_s for a in chunk])[:, None, None]
        airtime = np.array([systems[a].packet_airtime_s for a in chunk])[:, None, None]
        period = np.array([seqs[a].size for a in chunk])[:, None, None] * dwell
        aligned = np.array([prep.links[v][a].aligned for a in chunk])[:, None, None]
        phase = np.where(aligned, 0.0, rng.random((len(chunk), n, 1)) * period)
        lo, hi = _dwell_range(t0[None], phase, dwell, sv.packet_airtime_s, airtime)
        width = prep.window[v, chunk]
        many = np.array([math.ceil((sv.packet_airtime_s + systems[a].packet_airtime_s) / systems[a].dwell_s) + 1
                         > _DRAWN_DWELLS for a in chunk])
        counts = np.zeros(lo.shape, dtype=np.int64)
        few = np.flatnonzero(~many)
        if few.size:
            counts[few] = _counts_drawn(seqs, [chunk[i] for i in few], chan_v, lo[few], hi[few], width[few])
        for i in np.flatnonzero(many):
            counts[i] = _counts_from_totals(seqs[chunk[i]], chan_v, lo[i], hi[i], int(width[i]))
        # each exposed dwell transmits independently with a's activity: one draw per hop for all of them
        quiet = (1.0 - prep.activity[chunk])[:, None, None] ** counts
        lost |= (rng.random(counts.shape) < 1.0 - quiet).any(axis=0)
    return lost


def _interferer_hits(rng, prep: PreparedSite, v: int, k: int, chan_v: np.ndarray, t0: np.ndarray) -> np.ndarray:
    link = prep.interferer_links[v][k]
    lo, hi = prep.interferer_range[v, k]
    harmed = (chan_v >= lo) & (chan_v < hi)
    if not harmed.any():
        return harmed
    itf = prep.site.interferers[k]
    if itf.burst_s is None:
        return harmed & (rng.random(chan_v.shape) < link.activity_fraction)
    tv = prep.site.systems[v].packet_airtime_s
    phase = rng.random((chan_v.shape[0], 1)) * itf.period_s
    hit = np.zeros(chan_v.shape, dtype=bool)
    first = np.floor((t0 - itf.burst_s - phase) / itf.period_s).astype(np.int64)
    for j in range(math.ceil((tv + itf.burst_s) / itf.period_s) + 2):
        begin = (first + j) * itf.period_s + phase
        overlaps = (begin < t0 + tv) & (begin + itf.burst_s > t0)
        hit |= overlaps & (rng.random(chan_v.shape) < link.activity_fraction)
    return hit & harmed


def simulate_retries(prep: PreparedSite, sequences: list[np.ndarray], v: int, packets: int, seed: int,
                     rms_delay_spread_s: float, reach: np.ndarray | None = None) -> RetryFigures:
    """Residual loss of system v after its retry limit, driven by every system's actual sequence. `reach`
    ((S,) bool, see `reachable`) names the systems that can hit v, if already known."""
    rng = np.random.Generator(np.random.PCG64([seed, v]))
    system = prep.site.systems[v]
    attempts = system.retry_limit + 1
    per = system.hops_per_attempt
    hops = attempts * per
    seq_v = np.asarray(sequences[v])
    start = rng.integers(0, seq_v.size, packets)
    chan_v = seq_v[(start[:, None] + np.arange(hops)[None, :]) % seq_v.size]
    lost = _fades(rng, chan_v, prep, v, rms_delay_spread_s)
    t0 = (start[:, None] + np.arange(hops)[None, :]) * system.dwell_s
    reach = reachable(prep, sequences, v) if reach is None else reach
    sources = [a for a in range(prep.n_systems) if a != v and reach[a]]
    if sources:
        seqs = {a: np.asarray(sequences[a]) for a in sources}
        lost |= _system_hits(rng, prep, v, seqs, sources, chan_v, t0)
    for k in range(len(prep.site.interferers)):
        lost |= _interferer_hits(rng, prep, v, k, chan_v, t0)
    attempt_lost = lost.reshape(packets, attempts, per).any(axis=2)
    residual_hits = int(np.count_nonzero(attempt_lost.all(axis=1)))
    p = float(attempt_lost.mean())
    return RetryFigures(system=v, packets=packets, attempt_loss=p, residual_loss=residual_hits / packets,
                        residual_interval=wilson_interval(residual_hits, packets), independent_residual=p**attempts)
