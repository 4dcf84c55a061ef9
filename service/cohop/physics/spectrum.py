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

`channel_power_mw` and `share_occupied` do one channel; `channel_powers_mw` and
`shares_occupied` do every channel of a grid at once, in O((points + channels)
log points): the whole intervals inside a channel are summed from sums over
aligned power-of-two blocks of intervals (`range_sums`), which adds only
non-negative terms, so a weak channel beside a strong one keeps its digits
(differences of a running sum would lose them).
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


def range_sums(values, lo, hi) -> np.ndarray:
    """sum(values[lo_i:hi_i]) for each pair, from a tree of sums over aligned power-of-two blocks
    (every range is a disjoint union of at most 2 log2(n) blocks; only the values themselves are added)."""
    v = np.asarray(values, dtype=float)
    size = 1 << max(0, (v.size - 1).bit_length())
    tree = np.zeros(2 * size)
    tree[size:size + v.size] = v
    half = size // 2
    while half >= 1:
        tree[half:2 * half] = tree[2 * half:4 * half:2] + tree[2 * half + 1:4 * half:2]
        half //= 2
    left = np.asarray(lo, dtype=np.int64) + size
    right = np.asarray(hi, dtype=np.int64) + size
    total = np.zeros(left.shape)
    while True:
        active = left < right
        if not active.any():
            return total
        take = active & (left % 2 == 1)
        total += np.where(take, tree[np.minimum(left, 2 * size - 1)], 0.0)
        left = left + take
        take = active & (right % 2 == 1) & (left < right)
        right = right - take
        total += np.where(take, tree[np.minimum(right, 2 * size - 1)], 0.0)
        left, right = left // 2, right // 2


def channel_powers_mw(frequencies_hz, levels_dbm, rbw_hz: float, centres_hz, bandwidth_hz: float,
                      noise_bandwidth_factor: float = 1.0) -> np.ndarray:
    """`channel_power_mw` for every centre at once; nan where the trace does not cover the channel."""
    f = np.asarray(frequencies_hz, dtype=float)
    centres = np.asarray(centres_hz, dtype=float)
    lo_ch, hi_ch = centres - bandwidth_hz / 2, centres + bandwidth_hz / 2
    lo, hi = point_shares_hz(f)
    density = dbm_to_mw(levels_dbm) / (noise_bandwidth_factor * rbw_hz)
    last = f.size - 1
    first_i = np.clip(np.searchsorted(hi, lo_ch, side="right"), 0, last)  # first share reaching past lo_ch
    last_i = np.clip(np.searchsorted(lo, hi_ch, side="left") - 1, 0, last)  # last share starting below hi_ch

    def part(i):
        return density[i] * np.clip(np.minimum(hi[i], hi_ch) - np.maximum(lo[i], lo_ch), 0.0, None)

    whole = range_sums(density * (hi - lo), np.minimum(first_i + 1, last_i), last_i)
    summed = part(first_i) + np.where(last_i > first_i, part(last_i) + whole, 0.0)
    j = np.searchsorted(f, lo_ch, side="left")
    inside = (j <= last) & (f[np.minimum(j, last)] < hi_ch)
    interpolated = dbm_to_mw(np.interp(centres, f, np.asarray(levels_dbm, dtype=float))) / (
        noise_bandwidth_factor * rbw_hz) * bandwidth_hz
    covered = (lo[0] <= lo_ch + 1e-6) & (hi[-1] >= hi_ch - 1e-6)
    return np.where(covered, np.where(inside, summed, interpolated), np.nan)


def shares_occupied(frequencies_hz, occupancy, centres_hz, bandwidth_hz: float) -> np.ndarray:
    """`share_occupied` for every centre at once."""
    f = np.asarray(frequencies_hz, dtype=float)
    occ = np.asarray(occupancy, dtype=float)
    centres = np.asarray(centres_hz, dtype=float)
    start = np.searchsorted(f, centres - bandwidth_hz / 2, side="left")
    stop = np.searchsorted(f, centres + bandwidth_hz / 2, side="left")
    mean = range_sums(occ, start, stop) / np.maximum(stop - start, 1)
    right = np.clip(np.searchsorted(f, centres), 0, f.size - 1)
    left = np.maximum(right - 1, 0)
    nearest = np.where(np.abs(f[left] - centres) <= np.abs(f[right] - centres), left, right)
    return np.where(stop > start, mean, occ[nearest])
