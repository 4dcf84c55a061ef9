"""Sequence-driven Monte Carlo of retries: real hop orders, real timing, correlated fading.

A packet of victim v starts on a random hop of its sequence; attempt k uses
the next `hops_per_attempt` hops. Every other system keeps one random time
offset over its whole period for the packet (slot-aligned group members keep
the plan's alignment)
and is active in each of its dwells independently; its channel at any time
is read from its own sequence. A hop is hit when an overlapping active burst
lies inside v's harmful window; fixed interferers hit as in the analytic
model (independently per attempt; bursty ones through their phase, kept
for the packet). Fading follows the hops: the complex gain is AR(1) from hop
to hop with magnitude sqrt(r), r the envelope correlation at that frequency
step (`theory.envelope_correlation`, Jakes), since the envelope correlation
of Rayleigh fading is close to the squared magnitude of the complex one
[mem]; Rician channels add their fixed line-of-sight part. A hop fades when
the power falls below 10^(-M/10) of the mean.

The residual loss after the retry limit is then counted directly and
reported beside p^(k+1), the independent-attempt figure from the same
simulated per-attempt loss, so their difference is the cost of correlation.

`markov_residual` simulates a two-state (Gilbert-Elliott) loss chain; the
tests check the retry accounting against p (p + rho (1 - p))^k with it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from cohop.prepare import PreparedSite
from cohop.sequences import theory


@dataclass(frozen=True)
class RetryFigures:
    system: int
    packets: int
    attempt_loss: float  # simulated per-attempt loss (collision or fade)
    residual_loss: float  # simulated: every attempt lost
    residual_interval: tuple[float, float]
    independent_residual: float  # attempt_loss^(k+1)


def _wilson(hits: int, n: int) -> tuple[float, float]:
    from cohop.montecarlo import SimulatedRate

    return SimulatedRate(hits, n).interval()


def _fades(rng, channels_per_hop: np.ndarray, prep: PreparedSite, v: int, sigma_tau: float) -> np.ndarray:
    """(packets, hops) booleans: the hop fades. channels_per_hop holds v's channel on each hop."""
    system = prep.site.systems[v]
    if system.fading.model == "none":
        return np.zeros(channels_per_hop.shape, dtype=bool)
    n, hops = channels_per_hop.shape
    df = np.abs(np.diff(channels_per_hop, axis=1)) * prep.spacing_hz
    rho = np.sqrt(theory.envelope_correlation(df, sigma_tau))
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


def _system_hits(rng, prep: PreparedSite, v: int, a: int, seq_v: np.ndarray, seq_a: np.ndarray,
                 start: np.ndarray, hops: int) -> np.ndarray:
    """(packets, hops): a hits v's hop."""
    w = int(prep.window[v, a])
    n = start.size
    if w < 0 or np.abs(np.subtract.outer(seq_v, seq_a)).min() > w:  # a never comes inside v's window
        return np.zeros((n, hops), dtype=bool)
    sv, sa = prep.site.systems[v], prep.site.systems[a]
    t0 = (start[:, None] + np.arange(hops)[None, :]) * sv.dwell_s  # packet starts on each hop
    # a random time offset over a's whole period (its sequence is not tied to v's), unless slot-aligned
    phase = np.zeros((n, 1)) if prep.links[v][a].aligned else rng.random((n, 1)) * sa.dwell_s * seq_a.size
    chan_v = seq_v[(start[:, None] + np.arange(hops)[None, :]) % seq_v.size]
    exposures = np.zeros((n, hops), dtype=np.int8)  # a's packets that overlap v's and sit in its window
    span = math.ceil((sv.packet_airtime_s + sa.packet_airtime_s) / sa.dwell_s) + 1
    first = np.floor((t0 - sa.packet_airtime_s - phase) / sa.dwell_s).astype(np.int64)
    for j in range(span + 1):
        m = first + j
        begin = m * sa.dwell_s + phase
        overlaps = (begin < t0 + sv.packet_airtime_s) & (begin + sa.packet_airtime_s > t0)
        exposures += overlaps & (np.abs(seq_a[m % seq_a.size] - chan_v) <= w)
    # each exposed dwell transmits independently with a's activity: one draw per hop for all of them
    return rng.random((n, hops)) < 1.0 - (1.0 - sa.activity_fraction) ** exposures


def _interferer_hits(rng, prep: PreparedSite, v: int, k: int, chan_v: np.ndarray, t0: np.ndarray) -> np.ndarray:
    link = prep.interferer_links[v][k]
    lo, hi = prep.interferer_range[v, k]
    harmed = (chan_v >= lo) & (chan_v < hi)
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
                     rms_delay_spread_s: float) -> RetryFigures:
    """Residual loss of system v after its retry limit, driven by every system's actual sequence."""
    rng = np.random.Generator(np.random.PCG64([seed, v]))
    system = prep.site.systems[v]
    attempts = system.retry_limit + 1
    per = system.hops_per_attempt
    hops = attempts * per
    seq_v = np.asarray(sequences[v])
    start = rng.integers(0, seq_v.size, packets)
    chan_v = seq_v[(start[:, None] + np.arange(hops)[None, :]) % seq_v.size]
    lost = _fades(rng, chan_v, prep, v, rms_delay_spread_s)
    for a in range(prep.n_systems):
        if a != v:
            lost |= _system_hits(rng, prep, v, a, seq_v, np.asarray(sequences[a]), start, hops)
    t0 = (start[:, None] + np.arange(hops)[None, :]) * system.dwell_s
    for k in range(len(prep.site.interferers)):
        lost |= _interferer_hits(rng, prep, v, k, chan_v, t0)
    attempt_lost = lost.reshape(packets, attempts, per).any(axis=2)
    residual_hits = int(np.count_nonzero(attempt_lost.all(axis=1)))
    p = float(attempt_lost.mean())
    return RetryFigures(system=v, packets=packets, attempt_loss=p, residual_loss=residual_hits / packets,
                        residual_interval=_wilson(residual_hits, packets), independent_residual=p**attempts)


def markov_residual(p: float, rho: float, retries: int, packets: int, seed: int) -> tuple[float, tuple[float, float]]:
    """Residual loss of a two-state loss chain: stationary loss p, P(loss | loss) = p + rho (1 - p)."""
    rng = np.random.Generator(np.random.PCG64(seed))
    stay = p + rho * (1 - p)
    enter = p * (1 - stay) / (1 - p) if p < 1 else 1.0
    state = rng.random(packets) < p
    all_lost = state.copy()
    for _ in range(retries):
        u = rng.random(packets)
        state = np.where(state, u < stay, u < enter)
        all_lost &= state
    hits = int(np.count_nonzero(all_lost))
    return hits / packets, _wilson(hits, packets)
