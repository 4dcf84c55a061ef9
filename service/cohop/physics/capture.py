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
  rho is exact for one interferer. Several do not factor [4]: their powers
  add before they meet the wanted signal, and the product over them errs
  optimistic (the Rician power's survival is log-concave, so P(s > m + a + b)
  P(s > m) <= P(s > m + a) P(s > m + b)). The evaluator combines them jointly
  instead (the joint law below, `cohop.joint`).
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

import functools
from dataclasses import dataclass

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


# --- several transmissions at a Rician-faded victim: the joint law ---------------------------------------------
#
# With a Rician wanted signal the survival of a hop does not factor over the transmissions that overlap it
# [4], so the evaluator computes it jointly. The unit-mean Rician power is a Poisson mixture of Gamma powers
# [3]: s = Gamma(N_K + 1, theta), N_K ~ Poisson(K), theta = 1 / (K + 1), hence
#
#     P(s > t) = P(N_K >= N_t),  N_t ~ Poisson(t / theta)                         [der: Gamma-Poisson duality]
#
# and for t = m + sum_j g_j x_j (noise plus every overlapped transmission, each with its link fading g_j) the
# count N_t is a sum of independent counts: Poisson(m / theta) for the noise, Poisson(x_j / theta) for a steady
# transmission, Geometric with P(Z = k) = (1 - p) p^k, p = b / (1 + b), b = x_j / theta, for a Rayleigh-faded
# one (an Exp-mixed Poisson) [der]. The probability generating function of N_t is therefore the product
#
#     F(u) = exp(-(1 - u) m / theta) * prod_j ell_j(u),   ell_j(u) = E[exp(-(1 - u) g_j x_j / theta)]
#          = exp(-(1 - u) b)  (steady),   1 / (1 + (1 - u) b)  (Rayleigh-faded),
#
# and the success probability is sum_k Q(k) [u^k] F(u), Q(k) = P(N_K >= k): a linear functional of F. An
# expectation over which transmissions are present (activity, the overlapped channels) is linear too, so the
# evaluator computes E[prod_j ell_j(u)] with the same several-dwell law as for the product, at complex points
# u on a circle, the factor of a transmission being 1 - alpha (1 - ell_j(u)) in place of 1 - alpha rho_j;
# the coefficients come from the discrete Fourier transform on the circle of radius r (Cauchy's formula,
# damped so that the aliasing is at most r^M = JOINT_ALIAS; the trapezoidal rule, e.g. Abate and Whitt,
# "Numerical inversion of probability generating functions", Oper. Res. Lett. 12, 1992). The series is cut
# where P(N_K > D) < JOINT_TAIL. For one transmission this gives rho itself (tests check it against the
# closed forms above), and for a steady set of transmissions ncx2.sf at their summed power.

#: The series is cut at D with P(N_K > D) below this.
JOINT_TAIL = 1e-12
#: Aliasing of the damped transform: r^M.
JOINT_ALIAS = 1e-10
#: A K-factor whose series needs more terms than this keeps the product over transmissions (the answer says so):
#: about 20.3 dB, where a nearly steady wanted signal costs hundreds of kernel evaluations per victim.
JOINT_MAX_TERMS = 200
#: Below this noise-only survival the joint law's rounding (about 1e-10 absolute) is not small against it; such
#: a victim keeps the product (its hops are lost to the noise in more than 99.9999 % of cases anyway).
JOINT_MIN_SURVIVAL = 1e-6


@functools.lru_cache(maxsize=256)
def joint_terms(k_factor_db: float) -> int:
    """D: the terms of the Rician series kept (P(N_K > D) < JOINT_TAIL)."""
    from scipy.stats import poisson

    return int(poisson.isf(JOINT_TAIL, float(ratio(k_factor_db)))) + 1


@dataclass(frozen=True)
class JointContour:
    """The points and weights of the joint law at one Rician victim: success = Re sum_l weights[l] G(points[l]),
    G(u) = E[prod_j ell_j(u)] over the transmissions (the noise factor is in the weights). The points are the
    upper half of M = 2 (D + 1) equally spaced points on the circle of radius r (the lower half are their
    conjugates, folded into the weights)."""

    points: np.ndarray  # complex (P,)
    weights: np.ndarray  # complex (P,)
    gain: float  # 1 / theta = K + 1: a transmission of excess x enters as b = gain x
    base: float  # the success with no interference: P(s > m), from the same weights

    def success(self, values: np.ndarray) -> np.ndarray:
        """The success probability from G at the points, along the last axis."""
        return np.real(np.asarray(values) @ self.weights)


def joint_contour(k_factor_db: float, margin_db: float) -> JointContour | None:
    """The joint law's contour for a Rician victim (K-factor, fade margin), or None when it is not used
    (more than JOINT_MAX_TERMS terms, or a noise-only survival below JOINT_MIN_SURVIVAL)."""
    d = joint_terms(k_factor_db)
    return None if d > JOINT_MAX_TERMS else _contour(float(k_factor_db), float(margin_db), d)


@functools.lru_cache(maxsize=256)
def _contour(k_factor_db: float, margin_db: float, d: int) -> JointContour | None:
    """`joint_contour` with D terms (cached: its arrays are read-only)."""
    from scipy.stats import poisson

    k = float(ratio(k_factor_db))
    gain = k + 1.0
    noise = gain * float(ratio(-margin_db))
    m = 2 * (d + 1)
    radius = JOINT_ALIAS ** (1.0 / m)
    ell = np.arange(m // 2 + 1)
    points = radius * np.exp(2j * np.pi * ell / m)
    kk = np.arange(d + 1)
    q = poisson.sf(kk - 1, k)  # Q(k) = P(N_K >= k)
    # W_l = (1 / M) sum_k Q(k) r^-k w^(-l k), the lower half folded in (conjugate pairs: factor 2)
    weights = (q * radius ** (-kk.astype(float))) @ np.exp(-2j * np.pi * np.outer(kk, ell) / m) / m
    fold = np.full(ell.size, 2.0)
    fold[0] = fold[-1] = 1.0
    weights = weights * fold * np.exp(-(1.0 - points) * noise)
    base = float(np.real(weights.sum()))
    if not base >= JOINT_MIN_SURVIVAL:
        return None
    points.flags.writeable = False
    weights.flags.writeable = False
    return JointContour(points=points, weights=weights, gain=gain, base=base)


def transmission_transform(excess_db, link: str, gain: float, u: complex) -> np.ndarray:
    """1 - ell(u) of transmissions of excess `excess_db` at a Rician victim (gain = K + 1, the comment block
    above): 1 - exp(-(1 - u) b) for a steady link, (1 - u) b / (1 + (1 - u) b) for a Rayleigh-faded one,
    b = gain 10^(E/10); 1 for an infinite excess. For one transmission, 1 - success(1 - alpha (1 - ell)) / base
    is alpha times the harm rho of `harm_probability` (tests check it)."""
    b = gain * ratio(excess_db)
    z = (1.0 - u) * np.where(np.isinf(b), 0.0, b)
    if link == "steady":
        out = -np.expm1(-z)
    elif link == "rayleigh":
        out = z / (1.0 + z)
    else:
        raise ValueError(f"unknown interference link model {link!r}")
    return np.where(np.isinf(b), 1.0 + 0j, out)
