"""Headroom: spare channels above a system's regulatory minimum, so that losing some keeps it compliant.

A plan at the bare regulatory minimum becomes non-compliant the moment one
channel is lost to a new interferer. `SystemRequirement.spare_channels` asks
for this many channels above the profile's minimum; by default it is what one
*typical interferer* of the band takes away (`typical_interferer`), counted
at the worst alignment of the interferer on the grid (`channels_lost`):

- 2.4 GHz profiles: one Wi-Fi channel, about 22 MHz occupied (IEEE 802.11b
  DSSS channel; 20 MHz OFDM channels occupy a little less; common practice);
- 5.8 GHz profiles: one 20 MHz Wi-Fi channel (IEEE 802.11a/n, common practice);
- sub-GHz profiles: a 2 MHz wide emitter (common practice: a wideband
  telemetry or video link of the 900 MHz band);
- anything else, and the custom profile (it has no regulatory minimum to
  protect): no default spare.

The spare is capped by what fits: the channels the system may use (its
allowed channels at its separation) and an explicit `max_channels`; the cap
is reported. The answer states per system how many channels it can lose
before it falls below its regulatory minimum (channel count less that
minimum).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: (lowest band centre, highest band centre, occupied width of one typical interferer, what it is)
TYPICAL_INTERFERERS = (
    (0.0, 1.0e9, 2.0e6, "a 2 MHz wide emitter (sub-GHz profiles; common practice)"),
    (2.4e9, 2.5e9, 22.0e6, "one 2.4 GHz Wi-Fi channel, about 22 MHz occupied (common practice)"),
    (5.725e9, 5.875e9, 20.0e6, "one 20 MHz 5 GHz Wi-Fi channel (common practice)"),
)


@dataclass(frozen=True)
class Headroom:
    """One system's spare channels: what was asked, what was applied and why it may be less."""

    system: str
    regulatory_min_channels: int  # the least count the profile accepts
    spare_asked: int  # the request's spare_channels, or the default
    spare_default: bool  # spare_asked is the default for the band
    spare_applied: int  # what the plan's minimum count holds above the regulatory minimum
    capped_by: str | None  # None, "fit" (not enough channels the system may use) or "max_channels"
    typical_interferer: str | None  # what the default is sized for (None: no default for this band)


def typical_interferer(centre_hz: float) -> tuple[float, str] | None:
    """The occupied width and description of one typical interferer of a band centred at `centre_hz`."""
    for lo, hi, width, what in TYPICAL_INTERFERERS:
        if lo <= centre_hz < hi:
            return width, what
    return None


def channels_lost(width_hz: float, bandwidth_hz: float, spacing_hz: float) -> int:
    """Grid channels of a system with `bandwidth_hz` that overlap an emitter `width_hz` wide, at the worst
    alignment: a channel overlaps when its centre lies within (width + bandwidth) / 2 of the emitter's
    centre, an open interval of length width + bandwidth, which holds at most ceil(length / spacing)
    grid centres."""
    return max(0, math.ceil((width_hz + bandwidth_hz) / spacing_hz - 1e-9))


def fitting_count(channels: np.ndarray, separation: int) -> int:
    """Most channels of `channels` (grid indices) at least `separation` grid steps apart (greedy from the
    lowest, which is optimal on a line)."""
    count, last = 0, None
    for c in np.sort(np.asarray(channels, dtype=int)).tolist():
        if last is None or c - last >= separation:
            count, last = count + 1, c
    return count


def band_centre_hz(prep) -> float:
    band = prep.band
    if band is not None:
        return 0.5 * (band.low_hz + band.high_hz)
    return float(np.mean(prep.centres_hz))


def headroom_for(prep, v: int, asked: int | None, regulatory_min: int, allowed: np.ndarray, separation: int,
                 max_channels: int | None) -> Headroom:
    """System v's spare channels: `asked` (None: the band's default), capped by the channels it may use
    (`allowed`, at `separation`) and by `max_channels`."""
    system = prep.site.systems[v]
    typical = None if prep.profile.band is None else typical_interferer(band_centre_hz(prep))  # custom: none
    default = asked is None
    if default:
        asked = 0 if typical is None else channels_lost(typical[0], system.bandwidth_hz, prep.spacing_hz)
    applied, capped = asked, None
    fit = fitting_count(np.flatnonzero(allowed), separation)
    if regulatory_min + applied > fit:
        applied, capped = max(0, fit - regulatory_min), "fit"
    if max_channels is not None and regulatory_min + applied > max_channels:
        applied, capped = max(0, max_channels - regulatory_min), "max_channels"
    return Headroom(system.id, int(regulatory_min), int(asked), default, int(applied), capped,
                    None if typical is None else typical[1])
