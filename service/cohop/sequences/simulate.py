"""Sequence-driven Monte Carlo of retries: real hop orders, real timing, correlated fading.

A packet of victim v starts on a random hop of its sequence; attempt k uses
the next `hops_per_attempt` hops. Every other system keeps one random time
offset over its whole period for the packet (slot-aligned group members keep
the plan's alignment) and is active in each of its dwells independently; its
channel at any time is read from its own sequence. An overlapping active
burst at channel offset d destroys the hop with its harm rho(d) (`cohop.harm`,
0 beyond `prep.harm.reach`), independently of the others; fixed interferers
hit as in the analytic model, each transmission with alpha rho(channel)
(independently per hop; bursty ones through their phase, kept for the
packet, one draw per overlapped burst). Fading follows the hops: the complex gain
is AR(1) from hop to hop with magnitude sqrt(r), r the envelope correlation
at that frequency step (`cohop.stats.hopping.envelope_correlation`, after
Jakes, "Microwave Mobile Communications", 1974), since the envelope
correlation of Rayleigh fading is close to the squared magnitude of the
complex one [mem]; Rician channels add their fixed line-of-sight part. A hop
fades when the power falls below 10^(-M/10) of the mean.

Source a's dwells m that overlap v's packet starting at t0 are those with
m D_a + phi < t0 + T_v and m D_a + phi + T_a > t0, a run of consecutive m; of
them, the ones whose channel lies in each band of equal harm rho_g of the pair
(`cohop.sequences.bands`) are counted (up to `cohop.limits.MAX_OVERLAPS` and
more, in 64-bit integers), and each is active and destroys the hop
independently, so the hop is hit with probability
1 - prod_g (1 - alpha_a rho_g)^(count_g), drawn once per cell (the same law
as one draw per transmission). With fading "none" there is one band, rho 1
inside the threshold window: 1 - (1 - alpha_a)^count. All sources that can
reach v are drawn together (their counts as one array); a source overlapping
many dwells has its counts read from running totals along its sequence
instead of dwell by dwell.

The residual loss after the retry limit is then counted directly and
reported beside p^(k+1), the independent-attempt figure from the same
simulated per-attempt loss, so their difference is the cost of correlation.
Intervals are Wilson's (`cohop.stats.intervals`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from cohop import harm
from cohop.prepare import PreparedSite
from cohop.sequences import bands
from cohop.stats import hopping
from cohop.stats.intervals import wilson_interval

#: Cells (sources x packets x hops) per working array of the source draws.
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


@dataclass(frozen=True)
class Orders:
    """Every system's order, laid out once for a whole simulation run: one flat array holding each order
    followed by its first _DRAWN_DWELLS + 1 hops again (so that a run of dwells from any start needs no
    wrap), and the sorted keys a K + channel of the channels each system visits (K wider than any channel
    plus twice the farthest reach of harm, the grid), which say at once which of v's channels a source can
    reach."""

    sequences: tuple[np.ndarray, ...]
    flat: np.ndarray
    first: np.ndarray  # (S,) where each order starts in `flat`
    size: np.ndarray  # (S,) its period in hops
    keys: np.ndarray
    span: int

    @classmethod
    def of(cls, prep: PreparedSite, sequences) -> "Orders":
        seqs = tuple(np.asarray(q, dtype=np.int64) for q in sequences)
        tiled = [np.resize(q, q.size + _DRAWN_DWELLS + 1) for q in seqs]
        first = np.cumsum([0] + [t.size for t in tiled[:-1]])
        span = 3 * prep.n_channels + 2
        keys = np.unique(np.concatenate([a * span + q for a, q in enumerate(seqs)]))
        return cls(seqs, np.concatenate(tiled), first, np.array([q.size for q in seqs]), keys, span)

    def near(self, sources: np.ndarray, channels: np.ndarray, width: np.ndarray) -> np.ndarray:
        """(A, D): does some channel of source sources[i] lie within width[i] of channels[d]?"""
        base = sources[:, None] * self.span + channels[None, :]
        w = np.maximum(width, 0)[:, None]
        at = np.searchsorted(self.keys, base - w, side="left")
        return (at < self.keys.size) & (self.keys[np.minimum(at, self.keys.size - 1)] <= base + w)

    def reach(self, prep: PreparedSite, v: int) -> np.ndarray:
        """(S,) bool: some channel of a's order lies within reach of harm (`prep.harm.reach`) of some channel
        of v's."""
        others = np.array([a for a in range(prep.n_systems) if a != v], dtype=np.int64)
        out = np.zeros(prep.n_systems, dtype=bool)
        if others.size:
            width = prep.harm.reach[v, others]
            out[others] = (width >= 0) & self.near(others, np.unique(self.sequences[v]), width).any(axis=1)
        return out


def _counts_drawn(orders: Orders, source: np.ndarray, chan_v, lo, hi, width) -> np.ndarray:
    """Dwells of each cell's source in [lo, hi] (at most _DRAWN_DWELLS + 1 of them) on a channel within its
    `width` of `chan_v`, dwell by dwell, for flat arrays of cells."""
    span = hi - lo + 1
    at = orders.first[source] + lo % orders.size[source]
    out = np.zeros(lo.shape, dtype=np.int64)
    for j in range(int(span.max(initial=0))):
        out += (np.abs(orders.flat[at + j] - chan_v) <= width) & (span > j)
    return out


def _counts_from_totals(seq_a: np.ndarray, chan_v: np.ndarray, lo, hi, width: int) -> np.ndarray:
    """Dwells m in [lo, hi] of a with |seq_a[m mod L] - chan_v| <= width (flat arrays of cells), from
    running totals of each of v's channels along a's period: whole periods, then the part left."""
    size = seq_a.size
    channels, which = np.unique(chan_v, return_inverse=True)
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


def _system_hits(rng, prep: PreparedSite, v: int, orders: Orders, sources: np.ndarray, hop: np.ndarray) -> np.ndarray:
    """(packets, hops): some source in `sources` hits v's hop (`hop`: v's hop numbers). Each source keeps one
    random time offset over its whole period for the packet (none when slot-aligned with v). Only the
    (source, hop) cells whose channel has some channel of the source within its reach of harm are looked
    at; their overlapped dwells are counted per band (`cohop.sequences.bands`)."""
    n, hops = hop.shape
    cells = n * hops
    chan_v = orders.sequences[v][hop % orders.size[v]].ravel()
    distinct, which = np.unique(chan_v, return_inverse=True)
    lost = np.zeros(cells, dtype=bool)
    systems = prep.site.systems
    sv = systems[v]
    dwell_all = np.array([s.dwell_s for s in systems])
    airtime_all = np.array([s.packet_airtime_s for s in systems])
    aligned_all = np.array([link is not None and link.aligned for link in prep.links[v]])
    per_chunk = max(1, _CHUNK_ELEMENTS // cells)
    for c in range(0, sources.size, per_chunk):
        chunk = sources[c:c + per_chunk]
        chunk_bands = bands.system_bands(prep, v, chunk)
        width, dwell, airtime = chunk_bands.reach, dwell_all[chunk], airtime_all[chunk]
        period = orders.size[chunk] * dwell
        phase = np.where(aligned_all[chunk][:, None], 0.0, rng.random((chunk.size, n)) * period[:, None])
        found = np.flatnonzero(orders.near(chunk, distinct, width)[:, which])  # (source, cell) worth a look
        i, cell = found // cells, found % cells
        # a's dwells m overlapping v's packet [t0, t0 + T_v), t0 = hop x D_v: with z = (t0 - phi) / D_a, m runs
        # from floor(z - T_a / D_a) + 1 to ceil(z + T_v / D_a) - 1
        z = (hop.ravel()[cell] * sv.dwell_s - phase[i, cell // hops]) / dwell[i]
        lo = np.floor(z - (airtime / dwell)[i]).astype(np.int64) + 1
        hi = np.ceil(z + sv.packet_airtime_s / dwell[i]).astype(np.int64) - 1
        many = np.ceil((sv.packet_airtime_s + airtime) / dwell) + 1 > _DRAWN_DWELLS
        within = np.zeros((chunk_bands.count, found.size), dtype=np.int64)  # dwells within each band's width
        drawn = np.flatnonzero(~many[i])
        if drawn.size:
            at_i, at_chan, at_lo, at_hi = i[drawn], chan_v[cell[drawn]], lo[drawn], hi[drawn]
            for g in range(chunk_bands.count):
                within[g, drawn] = _counts_drawn(orders, chunk[at_i], at_chan, at_lo, at_hi,
                                                 chunk_bands.widths[at_i, g])
        for k in np.flatnonzero(many):
            mine = np.flatnonzero(i == k)
            for g in range(chunk_bands.count):
                within[g, mine] = _counts_from_totals(orders.sequences[chunk[k]], chan_v[cell[mine]], lo[mine],
                                                      hi[mine], int(chunk_bands.widths[k, g]))
        # each exposed dwell transmits independently with a's activity and then destroys the hop with its
        # band's harm: one draw per exposed cell for all
        exposed = np.flatnonzero(within[-1])
        hit = chunk_bands.hit(prep.activity[chunk])[i[exposed]].T  # (G, exposed)
        quiet = bands.survival(bands.per_band(within[:, exposed]), hit)
        lost[cell[exposed[rng.random(exposed.size) < 1.0 - quiet]]] = True
    return lost.reshape(n, hops)


def _interferer_hits(rng, prep: PreparedSite, v: int, k: int, chan_v: np.ndarray, t0: np.ndarray) -> np.ndarray:
    """(packets, hops): fixed interferer k destroys v's hop. Each of its transmissions overlapping the hop
    (a continuous one: one per hop) does so with alpha_k rho_k(channel) (`cohop.harm.interferer_harm`),
    independently; only channels in `prep.interferer_range` have harm."""
    link = prep.interferer_links[v][k]
    lo, hi = prep.interferer_range[v, k]
    harmed = (chan_v >= lo) & (chan_v < hi)
    if not harmed.any():
        return harmed
    itf = prep.site.interferers[k]
    spans = np.array([[i.low_hz, i.high_hz] for i in prep.site.interferers]).reshape(-1, 2)
    rho = harm.interferer_harm(prep.harm, prep.site.systems[v], v, spans, prep.centres_hz, np.arange(hi))[k]
    chance = link.activity_fraction * rho[np.minimum(chan_v, hi - 1)]  # one transmission destroys the hop
    if itf.burst_s is None:
        return harmed & (rng.random(chan_v.shape) < chance)
    tv = prep.site.systems[v].packet_airtime_s
    phase = rng.random((chan_v.shape[0], 1)) * itf.period_s
    hit = np.zeros(chan_v.shape, dtype=bool)
    first = np.floor((t0 - itf.burst_s - phase) / itf.period_s).astype(np.int64)
    for j in range(math.ceil((tv + itf.burst_s) / itf.period_s) + 2):
        begin = (first + j) * itf.period_s + phase
        overlaps = (begin < t0 + tv) & (begin + itf.burst_s > t0)
        hit |= overlaps & (rng.random(chan_v.shape) < chance)
    return hit & harmed


def simulate_retries(prep: PreparedSite, sequences, v: int, packets: int, seed: int, rms_delay_spread_s: float,
                     reach: np.ndarray | None = None) -> RetryFigures:
    """Residual loss of system v after its retry limit, driven by every system's actual sequence
    (`sequences`: one order per system, or an `Orders` built once for several victims). `reach` ((S,)
    bool, see `Orders.reach`) names the systems that can hit v, if already known."""
    orders = sequences if isinstance(sequences, Orders) else Orders.of(prep, sequences)
    rng = np.random.Generator(np.random.PCG64([seed, v]))
    system = prep.site.systems[v]
    attempts = system.retry_limit + 1
    per = system.hops_per_attempt
    hops = attempts * per
    seq_v = orders.sequences[v]
    start = rng.integers(0, seq_v.size, packets)
    hop = start[:, None] + np.arange(hops)[None, :]
    chan_v = seq_v[hop % seq_v.size]
    lost = _fades(rng, chan_v, prep, v, rms_delay_spread_s)
    reach = orders.reach(prep, v) if reach is None else np.asarray(reach, dtype=bool)
    sources = np.flatnonzero(reach & (np.arange(prep.n_systems) != v))
    if sources.size:
        lost |= _system_hits(rng, prep, v, orders, sources, hop)
    t0 = hop * system.dwell_s
    for k in range(len(prep.site.interferers)):
        lost |= _interferer_hits(rng, prep, v, k, chan_v, t0)
    attempt_lost = lost.reshape(packets, attempts, per).any(axis=2)
    residual_hits = int(np.count_nonzero(attempt_lost.all(axis=1)))
    p = float(attempt_lost.mean())
    return RetryFigures(system=v, packets=packets, attempt_loss=p, residual_loss=residual_hits / packets,
                        residual_interval=wilson_interval(residual_hits, packets), independent_residual=p**attempts)


def simulate_all(prep: PreparedSite, sequences, packets: int, seed: int, rms_delay_spread_s: float,
                 reach: np.ndarray | None = None) -> list[RetryFigures]:
    """`simulate_retries` for every system, the orders laid out once."""
    orders = Orders.of(prep, sequences)
    return [simulate_retries(prep, orders, v, packets, seed, rms_delay_spread_s, None if reach is None else reach[v])
            for v in range(prep.n_systems)]
