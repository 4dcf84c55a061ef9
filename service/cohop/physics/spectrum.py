"""From a spectrum-analyser trace to the power in a receiver's channel.

A trace point i at frequency f_i reads P_i [mW] in the resolution bandwidth
RBW, i.e. a power density P_i / (k RBW) with k the filter's equivalent noise
bandwidth factor. The power in a channel [f_c - B/2, f_c + B/2] is the
density integrated over the channel, here a midpoint sum over the points
inside it, each standing for its share of the frequency axis:

    P_ch = sum_i P_i * df_i / (k RBW),   df_i = (f_(i+1) - f_(i-1)) / 2

(ends one-sided; the share is clipped at the channel edges). Where no point
falls in the channel (a trace coarser than the channel), the density is
interpolated (in dB) at the channel centre and multiplied by B. This is the
channel-power method of spectrum analysers (common practice; the
equivalent-noise-bandwidth correction of the resolution filter, typically a
few percent, is left to the user as `noise_bandwidth_factor`). A peak
detector reads noise-like signals high, so its levels come out pessimistic.
"""

from __future__ import annotations

import numpy as np


def dbm_to_mw(dbm):
    return np.power(10.0, np.asarray(dbm, dtype=float) / 10.0)


def mw_to_dbm(mw):
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(np.asarray(mw, dtype=float))


def point_shares_hz(frequencies_hz) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper edge of the frequency interval each point stands for (midpoints between points)."""
    f = np.asarray(frequencies_hz, dtype=float)
    mid = (f[1:] + f[:-1]) / 2
    lo = np.concatenate([[f[0] - (mid[0] - f[0]) if f.size > 1 else f[0]], mid])
    hi = np.concatenate([mid, [f[-1] + (f[-1] - mid[-1]) if f.size > 1 else f[-1]]])
    return lo, hi


def channel_power_mw(frequencies_hz, levels_dbm, rbw_hz: float, centre_hz: float, bandwidth_hz: float,
                     noise_bandwidth_factor: float = 1.0) -> float | None:
    """Power in [centre - B/2, centre + B/2] [mW]; None if the trace does not cover the channel."""
    f = np.asarray(frequencies_hz, dtype=float)
    lo_ch, hi_ch = centre_hz - bandwidth_hz / 2, centre_hz + bandwidth_hz / 2
    lo, hi = point_shares_hz(f)
    if lo[0] > lo_ch + 1e-6 or hi[-1] < hi_ch - 1e-6:
        return None
    overlap = np.clip(np.minimum(hi, hi_ch) - np.maximum(lo, lo_ch), 0.0, None)
    density = dbm_to_mw(levels_dbm) / (noise_bandwidth_factor * rbw_hz)
    inside = (f >= lo_ch) & (f < hi_ch)
    if inside.any():
        return float((density * overlap).sum())
    level = np.interp(centre_hz, f, np.asarray(levels_dbm, dtype=float))
    return float(dbm_to_mw(level) / (noise_bandwidth_factor * rbw_hz) * bandwidth_hz)


def share_occupied(frequencies_hz, occupancy, centre_hz: float, bandwidth_hz: float) -> float:
    """Mean occupancy share of the points in the channel (the nearest point if none is inside)."""
    f = np.asarray(frequencies_hz, dtype=float)
    occ = np.asarray(occupancy, dtype=float)
    inside = (f >= centre_hz - bandwidth_hz / 2) & (f < centre_hz + bandwidth_hz / 2)
    if inside.any():
        return float(occ[inside].mean())
    return float(occ[int(np.argmin(np.abs(f - centre_hz)))])
