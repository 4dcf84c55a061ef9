"""Probability that a hop is lost to a multipath fade.

A hop fades when the received power drops below the receiver threshold,
which lies `margin_db` below the mean received power.

References
----------
[1] A. Goldsmith, "Wireless Communications", Cambridge 2005, ch. 3: outage
    probability of Rayleigh fading, P = 1 - exp(-P_min / P_mean).
[2] Rician power: 2 (K + 1) |h|^2 / P_mean is non-central chi-square with two
    degrees of freedom and non-centrality 2 K (same chapter); the CDF is
    1 - Q1(sqrt(2K), sqrt(2 (K + 1) rho)). We use scipy.stats.ncx2.
"""

from __future__ import annotations

import numpy as np
from scipy.stats import ncx2


def _threshold_ratio(margin_db):
    return np.power(10.0, -np.asarray(margin_db, dtype=float) / 10.0)


def rayleigh_fade_probability(margin_db):
    """[1]: 1 - exp(-10^(-M/10))."""
    return -np.expm1(-_threshold_ratio(margin_db))


def rician_fade_probability(margin_db, k_factor_db):
    """[2]: P(|h|^2 < rho P_mean) for a Rician channel of K-factor K."""
    k = np.power(10.0, np.asarray(k_factor_db, dtype=float) / 10.0)
    rho = _threshold_ratio(margin_db)
    return ncx2.cdf(2.0 * (k + 1.0) * rho, df=2, nc=2.0 * k)


def fade_probability(model: str, margin_db: float, k_factor_db: float | None = None) -> float:
    if model == "none":
        return 0.0
    if model == "rayleigh":
        return float(rayleigh_fade_probability(margin_db))
    if model == "rician":
        return float(rician_fade_probability(margin_db, k_factor_db))
    raise ValueError(f"unknown fading model {model!r}")
