"""Sampling a rectangle on a grid, and distances between sets of points. Pure, on floats or numpy arrays.

Units: metres. Used for systems that move (a crane along its rail, vehicles over a yard): the coupling of a
pair is evaluated at every pair of their sampled positions.
"""

from __future__ import annotations

import math

import numpy as np

#: Relative slack when deciding whether an edge falls on the grid (float noise in width / step).
_ON_GRID = 1e-9


def axis_samples(low_m: float, high_m: float, step_m: float) -> np.ndarray:
    """Points from low to high, step_m apart, the far edge included: low + i step while below high, then high.

    Spacing never exceeds step_m, so no point of [low, high] is farther than step_m / 2 from a sample
    (our choice: both edges are where a moving system comes closest to what lies beyond them).
    """
    width = high_m - low_m
    if width <= 0:
        return np.array([low_m], dtype=float)
    intervals = max(1, math.ceil(width / step_m - _ON_GRID))
    points = low_m + step_m * np.arange(intervals, dtype=float)
    return np.append(points, high_m)


def axis_sample_count(low_m: float, high_m: float, step_m: float) -> int:
    """len(axis_samples(low_m, high_m, step_m)) without building them (for the work caps)."""
    width = high_m - low_m
    return 1 if width <= 0 else max(1, math.ceil(width / step_m - _ON_GRID)) + 1


def rectangle_samples(x_min_m: float, x_max_m: float, y_min_m: float, y_max_m: float,
                      step_m: float) -> tuple[np.ndarray, np.ndarray]:
    """x and y of the grid points over the rectangle, x varying fastest (row by row in y)."""
    xs, ys = axis_samples(x_min_m, x_max_m, step_m), axis_samples(y_min_m, y_max_m, step_m)
    gx, gy = np.meshgrid(xs, ys)
    return gx.ravel(), gy.ravel()


def distances_m(ax, ay, az, bx, by, bz) -> np.ndarray:
    """Euclidean distances between every point a (rows) and every point b (columns): (len a, len b)."""
    ax, ay, az = (np.asarray(t, dtype=float)[:, None] for t in (ax, ay, az))
    bx, by, bz = (np.asarray(t, dtype=float)[None, :] for t in (bx, by, bz))
    return np.sqrt((ax - bx) ** 2 + (ay - by) ** 2 + (az - bz) ** 2)
