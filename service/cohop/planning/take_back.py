"""Channels an interferer rule avoids, taken back when a system would otherwise have too few.

The planner avoids, per system, the channels a fixed interferer (joint plans) or the systems already on
air (independent plans) hit more than `interferer_threshold` of the time. When what is left cannot hold
the system's minimum channel count at its separation, the fewest least-hit avoided channels that reach it
are taken back (ties together), and the answer says which: a system that must hop over interfered
channels (fading-aware capture makes a Wi-Fi network harm most of the 2.4 GHz band a little) gets the
least bad ones instead of no plan. One rule for both modes.
"""

from __future__ import annotations

import bisect

import numpy as np


def spaced(chans, separation: int, keep=()) -> list[int]:
    """`keep`, then channels of `chans` in the order given that stay `separation` steps from all taken
    (sorted; a neighbour check by bisection, so large grids stay cheap)."""
    taken = sorted(set(int(c) for c in keep))
    if separation <= 1:
        return sorted(set(taken) | set(int(c) for c in chans))
    for c in chans:
        c = int(c)
        i = bisect.bisect_left(taken, c)
        if (i < len(taken) and taken[i] - c < separation) or (i > 0 and c - taken[i - 1] < separation):
            continue
        taken.insert(i, c)
    return taken


def taken_back(free: np.ndarray, avoided: np.ndarray, hit: np.ndarray, need: int, separation: int,
               pins=()) -> np.ndarray:
    """The avoided channels to take back (sorted; empty when `free` channels already hold `need` at the
    separation): the fewest least-hit ones (`hit` per grid channel) with which they do, ties together.
    `free` and `avoided` are channel index arrays."""
    free = np.asarray(free, dtype=int)
    back = np.asarray(avoided, dtype=int)
    if len(spaced(free, separation, pins)) >= need or back.size == 0:
        return np.zeros(0, dtype=int)
    back = back[np.argsort(hit[back], kind="stable")]
    lo, hi = 1, back.size  # bisection: more channels never fit fewer
    while lo < hi:
        mid = (lo + hi) // 2
        if len(spaced(np.concatenate([free, back[:mid]]), separation, pins)) >= need:
            hi = mid
        else:
            lo = mid + 1
    level = hit[back[lo - 1]]
    return np.sort(back[hit[back] <= level * (1 + 1e-9) + 1e-15])
