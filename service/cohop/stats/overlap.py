"""How many of a source's bursts a victim's packet overlaps in time.

Model [derived: random phase between periodic bursts and a packet]: source a starts a burst of length
T_a at the start of each of its dwells (period D_a), in a share alpha_a of
them; the victim's packet lasts T_v. A burst overlaps the packet when it
starts inside a window of length W = T_v + T_a. With a random phase between
the two, the number K of burst starts in that window is
    k0 = floor(W / D_a)  with probability 1 - r,   k0 + 1  with probability r,
    r = W / D_a - k0,
which gives the reference's P0 = 1 - W/D, P1 = W/D for W <= D and
P1 = 2 - W/D, P2 = W/D - 1 for D < W <= 2D. Systems slot-aligned in one
time-base group (equal dwells, packets at the start of a dwell) overlap
exactly one of each other's dwells: K = 1.
"""

from __future__ import annotations

import math
from dataclasses import dataclass


@dataclass(frozen=True)
class OverlapCount:
    """K = k0 with probability 1 - r, k0 + 1 with probability r."""

    k0: int
    r: float

    @property
    def mean(self) -> float:
        return self.k0 + self.r

    def probabilities(self) -> dict[int, float]:
        """{k: P(K = k)} without zero entries."""
        out = {}
        if self.r < 1.0:
            out[self.k0] = 1.0 - self.r
        if self.r > 0.0:
            out[self.k0 + 1] = self.r
        return out


def random_phase_overlap(victim_airtime_s: float, burst_s: float, period_s: float) -> OverlapCount:
    """K for an unsynchronised source (random phase), see module docstring.

    Needs positive times whose ratio W / D_a is finite; requests keep it at most
    `cohop.limits.MAX_OVERLAPS`, and anything else is a caller's bug (ValueError)."""
    if not (victim_airtime_s > 0 and burst_s > 0 and period_s > 0):
        raise ValueError(f"times must be positive: {victim_airtime_s!r}, {burst_s!r}, {period_s!r}")
    ratio = (victim_airtime_s + burst_s) / period_s
    if not math.isfinite(ratio):
        raise ValueError(f"(T_v + T_a) / D_a is not finite for {victim_airtime_s!r}, {burst_s!r}, {period_s!r}")
    k0 = math.floor(ratio)
    return OverlapCount(k0=k0, r=ratio - k0)


ALIGNED = OverlapCount(k0=1, r=0.0)


def survival_from(k0, r, hit_probability):
    """E[(1 - p)^K] for K = k0 w.p. 1 - r, k0 + 1 w.p. r; broadcasts over arrays [der]."""
    q = 1.0 - hit_probability
    return (1.0 - r) * q**k0 + r * q ** (k0 + 1)


def survival(overlap: OverlapCount, hit_probability):
    """E[(1 - p)^K]: chance that none of the overlapped bursts hits [der]."""
    return survival_from(overlap.k0, overlap.r, hit_probability)
