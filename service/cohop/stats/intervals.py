"""Confidence intervals for simulated proportions.

References
----------
[1] E. B. Wilson, "Probable inference, the law of succession, and statistical
    inference", J. American Statistical Association 22(158), 1927: the score
    interval (p + z^2/(2n) +- z sqrt(p(1 - p)/n + z^2/(4n^2))) / (1 + z^2/n).
[2] A. Agresti and B. A. Coull, "Approximate is better than 'exact' for
    interval estimation of binomial proportions", The American Statistician
    52(2), 1998 (its worked values are in the tests).

The closed form is ours because it is called per simulated rate in every
answer; the tests check it against SciPy's
`scipy.stats.binomtest(k, n).proportion_ci(method="wilson")`, which computes
the same interval but also the test's p-value (about a millisecond a call).
"""

from __future__ import annotations

import math

from scipy.special import ndtri


def z_for(confidence: float) -> float:
    """The standard normal quantile of a two-sided interval at `confidence` (0.95 gives 1.95996...)."""
    return float(ndtri(0.5 + 0.5 * confidence))


#: 95 % two-sided.
Z95 = z_for(0.95)


def wilson_interval(hits: int, trials: int, z: float = Z95) -> tuple[float, float]:
    """[1] Wilson score interval for `hits` of `trials`; (0, 1) when there are no trials. The ends are
    exactly 0 with no hits and exactly 1 with every trial a hit (no float dust)."""
    n = trials
    if n <= 0:
        return 0.0, 1.0
    p = hits / n
    denom = 1 + z * z / n
    centre = (p + z * z / (2 * n)) / denom
    half = z * math.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / denom
    lo = 0.0 if hits == 0 else max(0.0, centre - half)
    hi = 1.0 if hits == n else min(1.0, centre + half)
    return lo, hi
