"""Runs of consecutive losses: independent trials (Feller), and two-state correlated losses.

References
----------
[1] W. Feller, "An Introduction to Probability Theory and Its Applications", vol. 1, 3rd ed., Wiley,
    1968, ch. XIII (recurrent events), section 7 (success runs): with success probability p per
    Bernoulli trial, a run of length m counted as a recurrent event (counting starts afresh after each
    run) occurs at trial n with probability u_n satisfying
        u_n + p u_(n-1) + ... + p^(m-1) u_(n-m+1) = p^m      (n >= m; u_0 = 1, u_1..u_(m-1) = 0),
    and the mean number of trials until the first run is (1 - p^m) / ((1 - p) p^m). Here a "success"
    is a lost trial. [pub; the recursion's form as recalled, checked by enumeration in the tests]
[2] First occurrence from recurrence: f_n = u_n - sum_(k=1..n-1) f_k u_(n-k) (renewal equation,
    Feller ch. XIII section 3). [pub]
[3] Runs that reach length m, counted once per run (a run is preceded by a delivered trial, or by the
    start): in a stationary independent sequence, (1 - p) p^m per trial. [der]
[4] Gilbert-Elliott two-state chain: state "bad" with stationary probability pi and lag-one correlation
    rho of the loss indicator has P(bad -> bad) = pi + rho (1 - pi) and P(good -> bad) = pi (1 - rho).
    [pub: E. N. Gilbert, Bell Syst. Tech. J. 39, 1960; E. O. Elliott, ibid. 42, 1963; the
    parametrisation by (pi, rho) is common practice]
[5] Two Rayleigh-faded powers with power correlation rho (Kibble's bivariate exponential, the
    bivariate gamma of shape one) have joint distribution function
        P(X <= x, Y <= y) = (1 - rho) sum_(k>=0) rho^k G(k + 1, x / (1 - rho)) G(k + 1, y / (1 - rho))
    for unit means, G the regularised lower incomplete gamma function. [pub: W. F. Kibble, Sankhya 5,
    1941; the series form as recalled, checked against numerical integration of the density and
    against simulated complex Gaussian pairs in the tests]. For Rayleigh fading the power correlation
    is the envelope correlation of Jakes' form (see `cohop.stats.hopping.envelope_correlation`) to
    within a few per cent [mem].
[6] Rician fading with the line of sight fixed over consecutive hops and the diffuse part correlated
    (complex correlation sqrt(rho), as in the sequence-driven simulation): given the first gain g1, the
    second is complex Gaussian with mean nu + sqrt(rho)(g1 - nu) and variance (1 - rho) sigma^2, so its
    power below a threshold is a noncentral chi-square probability (two degrees of freedom) [pub: the
    conditional Gaussian; Rice; scipy.stats.ncx2]; the joint probability integrates that over g1 inside
    the threshold disc (Gauss-Legendre in radius, trapezoid in angle) [der]. Checked against simulated
    pairs and, at K -> 0, against Kibble's form [5].
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special
from scipy.stats import ncx2

#: Most terms of the Kibble series summed; where more would be needed (power correlation within about
#: threshold / _KIBBLE_TERMS of one) the two fades are taken as one (the marginal: conservative for runs).
_KIBBLE_TERMS = 20_000


def mean_trials_to_run(p: float, m: int) -> float:
    """[1] Mean number of independent trials until the first run of m losses, loss probability p."""
    if p <= 0.0:
        return math.inf
    if p >= 1.0:
        return float(m)
    return (1.0 - p**m) / ((1.0 - p) * p**m)


def recurrence_probabilities(p: float, m: int, n: int) -> np.ndarray:
    """[1] u_0..u_n: a run of m losses (counted afresh after each run) ends at trial k."""
    u = np.zeros(n + 1)
    u[0] = 1.0
    powers = p ** np.arange(m)
    for k in range(m, n + 1):
        u[k] = p**m - float(powers[1:] @ u[k - 1:k - m:-1]) if m > 1 else p
    return u


def first_run_probabilities(p: float, m: int, n: int) -> np.ndarray:
    """[2] f_0..f_n: the first run of m losses ends at trial k (f_0 = 0)."""
    u = recurrence_probabilities(p, m, n)
    f = np.zeros(n + 1)
    for k in range(1, n + 1):
        f[k] = u[k] - float(f[1:k] @ u[k - 1:0:-1])
    return f


def run_within(p: float, m: int, n: int) -> float:
    """[1], [2] P(a run of m losses occurs within n independent trials)."""
    return float(first_run_probabilities(p, m, n).sum())


def run_rate_independent(p: float, m: int) -> float:
    """[3] Runs reaching length m per trial, counted once per run, independent losses."""
    return (1.0 - p) * p**m


def gilbert_elliott(pi: float, rho: float) -> np.ndarray:
    """[4] 2x2 transition matrix [from, to] over (good, bad) with stationary P(bad) = pi, correlation rho."""
    bb = pi + rho * (1.0 - pi)
    gb = pi * (1.0 - rho)
    return np.array([[1.0 - gb, gb], [1.0 - bb, bb]])


def joint_fade_probability(threshold, rho):
    """[5] P(both of two unit-mean Rayleigh powers with power correlation rho fall below `threshold`).

    Vectorised over `threshold` and `rho` (broadcast); rho = 1 gives the marginal 1 - exp(-threshold)."""
    a = np.asarray(threshold, dtype=float)
    r = np.clip(np.asarray(rho, dtype=float), 0.0, 1.0)
    a, r = np.broadcast_arrays(a, r)
    marginal = -np.expm1(-a)
    out = np.empty(a.shape)
    # terms k beyond scaled + 12 sqrt(scaled) + 60 hold G(k + 1, scaled) below ~1e-30 (Poisson tail)
    scaled = a / np.maximum(1.0 - r, 1e-300)
    need = scaled + 12.0 * np.sqrt(scaled) + 60.0
    near_one = need > _KIBBLE_TERMS
    out[near_one] = marginal[near_one]
    rest = ~near_one
    if rest.any():
        ar, rr, scaled = a[rest], r[rest], scaled[rest]
        k = np.arange(int(need[rest].max()) + 1)[:, None]
        g = special.gammainc(k + 1.0, scaled[None, :])
        out[rest] = (1.0 - rr) * np.sum(rr[None, :] ** k * g * g, axis=0)
    return np.minimum(out, marginal)


def fade_transitions(fade_probability: float, rho) -> np.ndarray:
    """(..., 2, 2) [from, to] over (no fade, fade) between consecutive hops of Rayleigh fading that fades
    with `fade_probability` per hop, power correlation `rho` per step ([5]; a Gilbert-Elliott chain [4]
    whose correlation follows from the joint fade probability)."""
    f = float(fade_probability)
    rho = np.asarray(rho, dtype=float)
    if f <= 0.0:
        out = np.zeros(rho.shape + (2, 2))
        out[..., 0, 0] = 1.0
        out[..., 1, 0] = 1.0
        return out
    threshold = -math.log1p(-f)
    both = joint_fade_probability(threshold, rho)
    bb = np.clip(both / f, 0.0, 1.0)
    gb = np.clip((f - both) / (1.0 - f), 0.0, 1.0) if f < 1.0 else np.ones_like(bb)
    out = np.empty(rho.shape + (2, 2))
    out[..., 0, 0], out[..., 0, 1] = 1.0 - gb, gb
    out[..., 1, 0], out[..., 1, 1] = 1.0 - bb, bb
    return out


#: Quadrature of [6]: Gauss-Legendre nodes in radius, trapezoid nodes in angle.
_RICE_RADIAL, _RICE_ANGULAR = 48, 96


def rician_joint_fade_probability(threshold: float, k_factor: float, rho) -> np.ndarray:
    """[6] P(both of two unit-mean Rician powers (K-factor k_factor, linear) fall below `threshold`), the
    diffuse parts with power correlation rho (vectorised over rho)."""
    rho = np.clip(np.atleast_1d(np.asarray(rho, dtype=float)), 0.0, 1.0)
    sigma2 = 1.0 / (k_factor + 1.0)
    nu = math.sqrt(k_factor / (k_factor + 1.0))
    radius = math.sqrt(threshold)
    x, w = np.polynomial.legendre.leggauss(_RICE_RADIAL)
    s = 0.5 * radius * (x + 1.0)
    ws = 0.5 * radius * w
    theta = np.arange(_RICE_ANGULAR) * (2.0 * math.pi / _RICE_ANGULAR)
    g1 = s[:, None] * np.exp(1j * theta[None, :])  # points of the disc |g1|^2 < threshold
    density = np.exp(-np.abs(g1 - nu) ** 2 / sigma2) / (math.pi * sigma2)
    area = (ws * s)[:, None] * (2.0 * math.pi / _RICE_ANGULAR)  # polar element s ds dtheta
    out = np.empty(rho.shape)
    for i, r in enumerate(rho):
        if r >= 1.0 - 1e-12:
            out[i] = float(np.sum(density * area))  # the same fade twice
            continue
        var = (1.0 - r) * sigma2
        mean = nu + math.sqrt(r) * (g1 - nu)
        second = ncx2.cdf(2.0 * threshold / var, df=2, nc=2.0 * np.abs(mean) ** 2 / var)
        out[i] = float(np.sum(density * second * area))
    return out


def rician_fade_transitions(fade_probability: float, threshold: float, k_factor: float, rho) -> np.ndarray:
    """(..., 2, 2) like `fade_transitions`, for Rician fading ([6]); `threshold` the power (relative to the
    mean) below which a hop fades, `fade_probability` its marginal."""
    f = float(fade_probability)
    rho = np.asarray(rho, dtype=float)
    flat = rho.ravel()
    distinct, where = np.unique(flat, return_inverse=True)
    both = rician_joint_fade_probability(threshold, k_factor, distinct)[where].reshape(rho.shape)
    bb = np.clip(both / f, 0.0, 1.0) if f > 0 else np.zeros(rho.shape)
    gb = np.clip((f - both) / (1.0 - f), 0.0, 1.0) if f < 1.0 else np.ones(rho.shape)
    out = np.empty(rho.shape + (2, 2))
    out[..., 0, 0], out[..., 0, 1] = 1.0 - gb, gb
    out[..., 1, 0], out[..., 1, 1] = 1.0 - bb, bb
    return out
