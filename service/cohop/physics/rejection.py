"""Receiver adjacent-channel rejection and the harmful offset window.

A hop of victim v is lost to an interfering signal at frequency offset df when
    S_v - (I - R_v(df)) < SIR_v,   i.e.   R_v(df) < E = I - (S_v - SIR_v),
with S_v the wanted level, I the interfering level and SIR_v the co-channel
capture ratio [1]. We call E the *excess* [dB].

A source wider than the victim's receiver puts only part of its power inside
it: for flat spectra the share is B_v / B_a (`bandwidth_share_db`, [2]); the
same share applies to hopping systems and fixed interferers. Offsets stay
as the reference states them: centre to centre between hopping systems,
from the nearest edge of a fixed interferer's span.

R_v is given as a table of (offset, rejection). We step it conservatively:
between tabulated offsets the rejection of the lower offset applies, and
below the first offset it is 0 dB (co-channel). Tables must be non-decreasing
in rejection, so the harmful offsets always form one window |df| < bound.

References
----------
[1] Common practice; the structure follows the C/I tables of radio
    standards, e.g. the Bluetooth Core Specification's basic-rate receiver
    (co-channel 11 dB, first adjacent 0 dB, second -30 dB, third and beyond
    -40 dB at 1 MHz channels; from memory).
[2] Bandwidth share of a flat-spectrum source: common practice (the
    reference's "bandwidth share" [trade]).
"""

from __future__ import annotations

import math
from bisect import bisect_right
from typing import Sequence


#: Offsets closer than this share of the grid spacing to a table offset count
#: as equal to it (float noise from first + k * spacing).
OFFSET_TOLERANCE = 1e-9


def rejection_db(offsets_hz: Sequence[float], rejections_db: Sequence[float], offset_hz: float) -> float:
    """Stepped rejection at `offset_hz` (>= 0); 0 dB below the first entry."""
    i = bisect_right(list(offsets_hz), abs(offset_hz) * (1 + OFFSET_TOLERANCE))
    return 0.0 if i == 0 else float(rejections_db[i - 1])


def harmful_bound_hz(excess_db: float, offsets_hz: Sequence[float], rejections_db: Sequence[float]) -> float:
    """Offsets strictly below the returned bound are harmful.

    0.0 means nothing is harmful (E <= 0, even co-channel); math.inf means
    every offset is (the table never reaches E: blocking).
    """
    if not excess_db > 0.0:
        return 0.0
    for offset, rejection in zip(offsets_hz, rejections_db):
        if rejection >= excess_db:
            return float(offset)
    return math.inf


def window_channels(bound_hz: float, spacing_hz: float, channel_count: int) -> int:
    """Largest harmful channel offset d (harmful iff |d| <= w) on the grid.

    -1 if nothing is harmful; `channel_count` if every offset on the grid is.
    """
    if bound_hz <= 0.0:
        return -1
    if math.isinf(bound_hz):
        return channel_count
    w = math.ceil(bound_hz / spacing_hz * (1 - OFFSET_TOLERANCE)) - 1
    return min(w, channel_count)


def bandwidth_share_db(victim_bandwidth_hz: float, source_bandwidth_hz: float) -> float:
    """10 log10(min(1, B_v / B_a)): the part of a flat-spectrum source's power inside the victim's receiver
    [2]; 0 dB for a source no wider than the victim (or of unknown width, 0)."""
    if not source_bandwidth_hz > 0:
        return 0.0
    return 10.0 * math.log10(min(1.0, victim_bandwidth_hz / source_bandwidth_hz))

