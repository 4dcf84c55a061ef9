"""Capture: the probability that one overlapped transmission destroys a hop.

A hop of victim v survives when its wanted power S clears the noise and the
interference together, S > z (N + I), with z the co-channel capture ratio
(SIR_v, linear) [1, 2]. In units of the mean wanted power S_mean:

    s = S / S_mean (unit mean),  m = z N / S_mean = 10^(-M/10),  x = z I / S_mean = 10^(E/10),

M the fade margin and E = I - (S_mean - SIR_v) - R_v(df) the interferer's
*excess* over the capture threshold at its frequency offset (`cohop.physics.
rejection`). The harm of one transmission is the probability that it destroys
a hop the noise alone would have let through:

    rho = 1 - P(s > m + g x) / P(s > m),

g the interference link's own fading (1 for a steady link, Exp(1) for a
Rayleigh-faded one).

- Rayleigh-faded wanted signal (s ~ Exp(1)): P(s > t) = exp(-t), so the
  noise factors out exactly and rho = 1 - L_g(x), the Laplace transform of g:
  1 - exp(-x) for a steady link, x / (1 + x) for a Rayleigh-faded one [1, 2].
  With several interferers the powers add and the joint survival is the
  noise term times one such factor per transmission: the product structure
  the evaluator uses is exact [1, 2].
- Rician-faded wanted signal (K-factor K): P(s > t) is the survival of a
  non-central chi-square with 2 degrees of freedom [3] (scipy.stats.ncx2);
  a Rayleigh-faded link has a closed form by exponential tilting
  (`_rician_faded_link_harm`).
  rho is exact for one interferer; the evaluator's product over several is
  an approximation here (the joint survival does not factor [4]), which the
  answer's assumptions state. It errs on the optimistic side: the Rician
  power's survival is log-concave, so P(s > m + a + b) P(s > m) <=
  P(s > m + a) P(s > m + b) and the joint survival is at most the product
  (measured against the Monte Carlo: up to 2.1 points of per-hop collision
  on generated sites, 8 points for one source with 9 faded dwells).
- No fading of the wanted signal ("none"): today's threshold, rho = 1 when
  E > 0 and 0 otherwise, each interferer judged alone [5].

For large excess every model gives 1, for very negative excess 0: the
threshold is the strong-margin limit of the faded models.

Truncation: a harm below HARM_FLOOR per transmission is taken as 0, which
keeps harmful windows finite (the planner and the evaluator only visit
offsets with some harm). What is dropped is below HARM_FLOOR x alpha x E[K]
per source and hop.

References
----------
[1] J.-P. M. G. Linnartz, "Narrowband Land-Mobile Radio Networks", Artech
    House 1993: capture probability in Rayleigh fading, success probability
    exp(-z N / S) prod_i 1 / (1 + z I_i / S) for Rayleigh-faded interferers.
[2] C. Kahlon, S. Szyszkowicz, S. Periyalwar, H. Yanikomeroglu, "Exact
    outage probability in Rayleigh fading with interferers...", IEEE Wireless
    Commun. Lett. 1(5), 2012: the same product with steady interferers as
    exp(-z I_i / S).
[3] A. Goldsmith, "Wireless Communications", Cambridge 2005, ch. 3: Rician
    power as a non-central chi-square (also `cohop.physics.fading`).
[4] M. Zorzi, "Capture probabilities in random-access mobile communications
    in the presence of Rician fading", IEEE Trans. Veh. Technol. 46(1), 1997.
[5] Threshold capture on median levels: common practice (the C/I tables of
    radio standards; `cohop.physics.rejection`).
"""

from __future__ import annotations

import numpy as np
from scipy.stats import ncx2

#: Wanted-signal fading models (the site's `fading.model`).
WANTED_MODELS = ("rayleigh", "rician", "none")
#: How an interfering signal fades at the victim (the site's `fading.interference`).
LINK_MODELS = ("steady", "rayleigh")
#: Documented default: a steady interference link. It is the conservative choice: 1 - exp(-x) >= x / (1 + x)
#: for every x >= 0 (e^x >= 1 + x), so a steady link never harms less than a faded one of the same mean.
DEFAULT_LINK_MODEL = "steady"
#: Harm per transmission below this is taken as 0 (the truncation above).
HARM_FLOOR = 1e-3


def ratio(db):
    """10^(dB / 10)."""
    return np.power(10.0, np.asarray(db, dtype=float) / 10.0)


def _rician_log_survival(t, k_factor_db: float):
    """log P(s > t) for unit-mean Rician power s of K-factor K [3]: 2 (K + 1) s ~ ncx2(2, 2K)."""
    k = float(ratio(k_factor_db))
    return ncx2.logsf(2.0 * (k + 1.0) * np.asarray(t, dtype=float), df=2, nc=2.0 * k)


def _rician_faded_link_harm(m: float, x, k_factor_db: float):
    """rho for a Rician wanted signal (K) and a Rayleigh-faded link, in closed form [der]: with g ~ Exp(1),
    P(s > m + g x) = P(s > m) - e^(m/x) int_m^inf f_s(s) e^(-s/x) ds, and tilting the Rician power density by
    e^(-sigma s) gives (K + 1)/b e^(K' - K) times a Rician-type density with 2 b s ~ ncx2(2, 2K'), b = K + 1 +
    sigma, K' = K (K + 1) / b [3]; so rho = (K + 1)/b e^(m/x + K' - K) ncx2.sf(2 b m, 2, 2K') / P(s > m). For K = 0
    it is x / (1 + x), Linnartz's Rayleigh form [1]."""
    k = float(ratio(k_factor_db))
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        sigma = 1.0 / x
        b = k + 1.0 + sigma
        k2 = k * (k + 1.0) / b
        log_tilted = (np.log((k + 1.0) / b) + m * sigma + k2 - k
                      + ncx2.logsf(2.0 * b * m, df=2, nc=2.0 * k2))
        rho = np.exp(log_tilted - _rician_log_survival(m, k_factor_db))
    rho = np.where(np.isinf(x), 1.0, np.nan_to_num(rho, nan=1.0))
    return np.clip(np.where(x > 0, rho, 0.0), 0.0, 1.0)


def harm_probability(excess_db, wanted: str = "rayleigh", link: str = DEFAULT_LINK_MODEL,
                     margin_db: float = 20.0, k_factor_db: float | None = None):
    """rho for transmissions of excess `excess_db` (array-like, dB over the capture threshold at the offset):
    the probability that one of them destroys a hop the noise alone lets through (module docstring; no
    truncation here). `margin_db` matters for a Rician wanted signal only (for Rayleigh it factors out)."""
    e = np.asarray(excess_db, dtype=float)
    if wanted == "none":
        return (e > 0.0).astype(float)
    x = ratio(e)
    if wanted == "rayleigh":
        if link == "steady":
            return -np.expm1(-x)  # [2]
        if link == "rayleigh":
            with np.errstate(divide="ignore"):
                return 1.0 / (1.0 + 1.0 / x)  # [1]: x / (1 + x), finite for x = 0 and x = inf
        raise ValueError(f"unknown interference link model {link!r}")
    if wanted == "rician":
        if k_factor_db is None:
            raise ValueError("a Rician wanted signal needs its k_factor_db")
        m = float(ratio(-margin_db))
        base = _rician_log_survival(m, k_factor_db)
        if not np.isfinite(base):  # the noise alone always wins: nothing is left to destroy (harm 1, cautious)
            return np.ones(x.shape)
        if link == "steady":
            return -np.expm1(_rician_log_survival(m + x, k_factor_db) - base)
        if link == "rayleigh":
            return _rician_faded_link_harm(m, x, k_factor_db)
        raise ValueError(f"unknown interference link model {link!r}")
    raise ValueError(f"unknown fading model {wanted!r}")


def truncated(rho):
    """rho with values below HARM_FLOOR set to 0 (the documented truncation)."""
    r = np.asarray(rho, dtype=float)
    return np.where(r < HARM_FLOOR, 0.0, r)
