"""The latency of a message arriving at a random time, read from its delivery-attempt probabilities.

A message arriving at a uniformly random time waits U ~ uniform(0, D_v) for the next dwell, then attempt k
(k = 1..R) occupies hops (k - 1) n .. k n - 1 (n = hops_per_attempt) and, if delivered, completes at
U + ((k - 1) n + n - 1) D_v + T_v [der; the packet starts at its dwell's start, as in the sequence-driven
simulation]. The latency is therefore a mixture of uniform distributions of width D_v with weights
w_k = P(delivered at attempt k); what is left, 1 - sum w_k, is never delivered (infinite latency).
"""

from __future__ import annotations

import numpy as np

#: Quantile levels reported.
LEVELS = (0.5, 0.9, 0.99, 0.999)


def attempt_offsets_s(attempts: int, hops_per_attempt: int, dwell_s: float, airtime_s: float) -> np.ndarray:
    """Latency of delivery at attempt k = 1..R when the message arrives just as a dwell starts."""
    k = np.arange(1, attempts + 1)
    return ((k - 1) * hops_per_attempt + hops_per_attempt - 1) * dwell_s + airtime_s


def cdf(x_s: float, weights, offsets_s, dwell_s: float):
    """P(latency <= x); `weights` (..., R) gives (...) values."""
    w, c = np.asarray(weights, dtype=float), np.asarray(offsets_s, dtype=float)
    return np.sum(w * np.clip((x_s - c) / dwell_s, 0.0, 1.0), axis=-1)


def late(x_s: float, weights, offsets_s, dwell_s: float):
    """P(delivered, but later than x): sum_k w_k (1 - clip((x - c_k) / D_v, 0, 1))."""
    w, c = np.asarray(weights, dtype=float), np.asarray(offsets_s, dtype=float)
    return np.sum(w * (1.0 - np.clip((x_s - c) / dwell_s, 0.0, 1.0)), axis=-1)


def quantile(level: float, weights, offsets_s, dwell_s: float) -> float | None:
    """Smallest x with P(latency <= x) >= level, or None when less than `level` is ever delivered.

    The components occupy [c_k, c_k + D_v) with c_(k+1) - c_k = n D_v >= D_v, so they do not overlap and
    the CDF is inverted piece by piece."""
    w, c = np.asarray(weights, dtype=float), np.asarray(offsets_s, dtype=float)
    below = np.concatenate([[0.0], np.cumsum(w)])
    if below[-1] < level:
        return None
    k = int(np.argmax(below[1:] >= level))
    if w[k] <= 0.0:
        return float(c[k])
    return float(c[k] + min(1.0, max(0.0, (level - below[k]) / w[k])) * dwell_s)
