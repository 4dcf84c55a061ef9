"""Losses combined over hops, fading and retries.

References
----------
[1] Independent attempts: a packet still lost after k retransmissions has
    probability p^(k + 1); the expected number of attempts with at most k + 1
    of them is sum_{j=0..k} p^j = (1 - p^(k+1)) / (1 - p) [der; geometric
    series, common practice].
[2] Independent loss mechanisms combine as 1 - (1 - a)(1 - b) [der].
"""

from __future__ import annotations

import numpy as np


def combine_independent(*probabilities):
    """[2] 1 - prod(1 - p_i)."""
    survive = 1.0
    for p in probabilities:
        survive = survive * (1.0 - np.asarray(p, dtype=float))
    return 1.0 - survive


def per_attempt(per_hop_probability, hops_per_attempt: int):
    """An attempt of n hops on independently drawn channels fails if any hop does [2]."""
    return 1.0 - (1.0 - np.asarray(per_hop_probability, dtype=float)) ** hops_per_attempt


def residual_loss(attempt_loss, retry_limit: int):
    """[1] p^(k + 1)."""
    return np.asarray(attempt_loss, dtype=float) ** (retry_limit + 1)


def expected_attempts(attempt_loss, retry_limit: int):
    """[1] sum_{j=0..k} p^j."""
    p = np.asarray(attempt_loss, dtype=float)
    return sum(p**j for j in range(retry_limit + 1))
