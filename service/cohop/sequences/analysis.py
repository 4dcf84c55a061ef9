"""What a set of hopping sequences does: measured properties and exact aligned hits.

Everything here is computed from the sequences themselves (no uniform-hopping
assumption): equal use, consecutive spacing and the fading correlation it
leaves, direction and step variety, occupancy windows, Hamming coincidences
between systems that share channels, the exact hit pattern of slot-aligned
systems, and the longest run of consecutive hops another system can hit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from cohop.prepare import PreparedSite
from cohop.sequences import theory
from cohop.sequences.construct import Sequence
from cohop.stats.overlap import random_phase_overlap, survival


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
    longest_run: int  # longest run of consecutive hops of a that b can hit (any phase)
    aligned: bool
    aligned_hit_rate: float | None  # a's per-hop hit rate from b in the plan's alignment (exact)
    unaligned_hit_rate: float  # the same sequences with a random phase (what losing alignment gives)


@dataclass
class SequenceReport:
    sequences: list[Sequence]
    orders: list[OrderFigures]
    pairs: list[PairFigures]
    family_bounds: dict[int, dict] = field(default_factory=dict)  # component -> Peng-Fan figures
    notes: list[str] = field(default_factory=list)


def order_figures(prep: PreparedSite, seq: Sequence, rms_delay_spread_s: float) -> OrderFigures:
    s = prep.site.systems[seq.system]
    ch = seq.channels
    n = ch.size
    hop_set = np.unique(ch)
    counts = np.array([np.count_nonzero(ch == c) for c in hop_set])
    steps = np.diff(np.concatenate([ch, ch[:1]])) if n > 1 else np.zeros(1, dtype=int)
    spacing_ch = np.abs(steps)
    df = spacing_ch * prep.spacing_hz
    r = theory.envelope_correlation(df, rms_delay_spread_s)
    reversals, distinct, looks_random = theory.order_statistics(ch)
    return OrderFigures(period_hops=n, period_s=n * s.dwell_s, uses_min=int(counts.min()), uses_max=int(counts.max()),
                        min_spacing_channels=int(spacing_ch.min()), required_spacing_channels=seq.required_spacing,
                        min_spacing_hz=float(df.min()), fading_correlation_max=float(r.max()),
                        fading_correlation_mean=float(r.mean()), reversal_share=reversals, distinct_steps=distinct,
                        looks_random=bool(looks_random))


def _harm(prep: PreparedSite, v: int, a: int, cv, ca) -> np.ndarray:
    w = int(prep.window[v, a])
    return np.abs(np.asarray(cv) - np.asarray(ca)) <= w if w >= 0 else np.zeros(np.broadcast(cv, ca).shape, bool)


def longest_true_run(hits: np.ndarray) -> int:
    """Longest run of True along the last axis, over every row: at each True, the distance back to the
    row's latest False (or to before its start) is the length of the run ending there."""
    h = np.atleast_2d(np.asarray(hits, dtype=bool))
    if h.size == 0:
        return 0
    idx = np.arange(h.shape[1])
    last_false = np.maximum.accumulate(np.where(h, -1, idx[None, :]), axis=1)
    return int((idx[None, :] - last_false).max(initial=0))


#: Time offsets of the other sequence tried when looking for the longest run.
RUN_PHASES = 128


def longest_run(prep: PreparedSite, v: int, a: int, x: np.ndarray, y: np.ndarray, phases: int = RUN_PHASES) -> int:
    """Longest run of v's consecutive hops during which a's dwell is on a channel inside v's harmful
    window, over `phases` time offsets spread evenly across a's whole period (every hop offset when the
    period has fewer hops; whether a transmits then is left to chance)."""
    sv, sa = prep.site.systems[v], prep.site.systems[a]
    horizon = 2 * max(x.size, math.ceil(y.size * sa.dwell_s / sv.dwell_s))
    t = np.arange(horizon) * sv.dwell_s  # v's packet starts
    phi = (np.arange(phases) / phases * y.size * sa.dwell_s + 0.5 * sa.dwell_s / phases)[:, None]
    idx = np.floor((t[None, :] - phi) / sa.dwell_s).astype(int) % y.size
    hits = _harm(prep, v, a, x[np.arange(horizon) % x.size][None, :], y[idx])
    return min(longest_true_run(hits), horizon)


def _unaligned_rate(prep: PreparedSite, v: int, a: int, x: np.ndarray, y: np.ndarray) -> float:
    """Per-hop hit rate with a random phase: each of a's channels equally likely (exact in expectation)."""
    sv, sa = prep.site.systems[v], prep.site.systems[a]
    harm = _harm(prep, v, a, x[:, None], y[None, :])
    p = sa.activity_fraction * harm.mean(axis=1)
    overlap = random_phase_overlap(sv.packet_airtime_s, sa.packet_airtime_s, sa.dwell_s)
    return float(np.mean(1.0 - survival(overlap, p)))


def aligned_channel_hits(prep: PreparedSite, v: int, a: int, x: np.ndarray, y: np.ndarray,
                         channels: np.ndarray) -> np.ndarray:
    """Slot-aligned sequences: a's per-hop hit probability on each of v's `channels`, exactly, over the
    common period (slot t: v on x[t mod Lx], a on y[t mod Ly]; a transmits in a share alpha_a of slots)."""
    period = math.lcm(x.size, y.size)
    t = np.arange(period)
    xv = x[t % x.size]
    hits = _harm(prep, v, a, xv, y[t % y.size]).astype(float)
    alpha = prep.site.systems[a].activity_fraction
    out = np.zeros(channels.size)
    for i, c in enumerate(channels):
        on = xv == c
        out[i] = alpha * hits[on].mean() if on.any() else 0.0
    return out


def _aligned_rate(prep: PreparedSite, v: int, a: int, x: np.ndarray, y: np.ndarray) -> float:
    """Slot-aligned, equal periods: exact per-hop hit rate of v from a over the common period."""
    period = math.lcm(x.size, y.size)
    t = np.arange(period)
    hits = _harm(prep, v, a, x[t % x.size], y[t % y.size])
    return float(prep.site.systems[a].activity_fraction * hits.mean())


def pair_figures(prep: PreparedSite, sv: Sequence, sa: Sequence, run_phases: int = RUN_PHASES) -> PairFigures:
    v, a = sv.system, sa.system
    x, y = sv.channels, sa.channels
    shared = int(np.intersect1d(x, y).size)
    same_rate = abs(prep.site.systems[v].dwell_s - prep.site.systems[a].dwell_s) < 1e-12
    coinc, period = (theory.coincidences_over_common_period(x, y) if same_rate and shared else (None, None))
    if same_rate and not shared:
        coinc, period = 0, math.lcm(x.size, y.size)
    aligned = prep.links[v][a].aligned
    return PairFigures(a=v, b=a, shared_channels=shared, coincidences_max=coinc, common_period_hops=period,
                       longest_run=longest_run(prep, v, a, x, y, run_phases) if prep.window[v, a] >= 0 else 0,
                       aligned=aligned,
                       aligned_hit_rate=_aligned_rate(prep, v, a, x, y) if aligned else None,
                       unaligned_hit_rate=_unaligned_rate(prep, v, a, x, y) if prep.window[v, a] >= 0 else 0.0)


def family_bounds(sequences: list[Sequence]) -> dict[int, dict]:
    """Peng-Fan bound for each one-coincidence component (before deletion: length p, p symbols)."""
    out = {}
    for comp in sorted({s.component for s in sequences if s.construction == "one-coincidence"}):
        members = [s for s in sequences if s.component == comp]
        p = members[0].prime
        out[comp] = {"prime": p, "members": len(members), "peng_fan_bound": theory.peng_fan_bound(p, len(members), p)}
    return out


def analyse(prep: PreparedSite, sequences: list[Sequence], rms_delay_spread_s: float,
            notes: list[str] | None = None, run_phases: int = RUN_PHASES) -> SequenceReport:
    """`run_phases`: time offsets tried for each pair's longest run (fewer when the time limit is short)."""
    orders = [order_figures(prep, s, rms_delay_spread_s) for s in sequences]
    pairs = []
    for i, sv in enumerate(sequences):
        for sa in sequences:
            if sa.system == sv.system:
                continue
            if prep.window[sv.system, sa.system] < 0 and not np.intersect1d(sv.channels, sa.channels).size:
                continue
            pairs.append(pair_figures(prep, sv, sa, run_phases))
    return SequenceReport(sequences=sequences, orders=orders, pairs=pairs, family_bounds=family_bounds(sequences),
                          notes=list(notes or []))
