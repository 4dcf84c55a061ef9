"""How many of a source's bursts a victim's packet overlaps in time.

Model [derived: random phase between periodic bursts and a packet]: source a starts a burst of length
T_a at the start of each of its dwells (period D_a), in a share alpha_a of
them; the victim's packet lasts T_v. A burst overlaps the packet when it
starts inside a window of length W = T_v + T_a. With a random phase between
the two, the number K of burst starts in that window is
    k0 = floor(W / D_a)  with probability 1 - r,   k0 + 1  with probability r,
    r = W / D_a - k0,
which gives the reference's P0 = 1 - W/D, P1 = W/D for W <= D and
P1 = 2 - W/D, P2 = W/D - 1 for D < W <= 2D. Systems slot-aligned in one
time-base group (equal dwells, packets at the start of a dwell) overlap
exactly one of each other's dwells: K = 1.

Which channels the K overlapped dwells use [derived, checked by simulation;
the reference's "several dwells in one packet"]: a hop order visits distinct
channels in consecutive dwells (any permutation order: planned,
one-coincidence, most radios), so the K channels are a random K-subset of
the source's N channels, not K independent draws. With h of them harmful
and each dwell active with probability alpha,
    P(no hit | K) = (1 - alpha)^(h q) E[(1 - alpha)^J],  J ~ Hypergeometric(N, h, m),
    q = floor(K / N), m = K - q N
(a window longer than the order's period visits every channel q times);
with full activity and K <= N this is C(N - h, K) / C(N, K). Example: a 20 ms
packet against 5 ms dwells over 20 channels, one harmful: 5/20 = 0.25 exactly,
against 1 - (19/20)^5 = 0.226 for independent draws. `survival_distinct`
computes it; `survival_from` keeps the independent-draw form for sources
that do not hop (a fixed interferer's bursts all land on its own span).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.special import gammaln


@dataclass(frozen=True)
class OverlapCount:
    """K = k0 with probability 1 - r, k0 + 1 with probability r."""

    k0: int
    r: float

    @property
    def mean(self) -> float:
        return self.k0 + self.r

    def probabilities(self) -> dict[int, float]:
        """{k: P(K = k)} without zero entries."""
        out = {}
        if self.r < 1.0:
            out[self.k0] = 1.0 - self.r
        if self.r > 0.0:
            out[self.k0 + 1] = self.r
        return out


def random_phase_overlap(victim_airtime_s: float, burst_s: float, period_s: float) -> OverlapCount:
    """K for an unsynchronised source (random phase), see module docstring.

    Needs positive times whose ratio W / D_a is finite; requests keep it at most
    `cohop.limits.MAX_OVERLAPS`, and anything else is a caller's bug (ValueError)."""
    if not (victim_airtime_s > 0 and burst_s > 0 and period_s > 0):
        raise ValueError(f"times must be positive: {victim_airtime_s!r}, {burst_s!r}, {period_s!r}")
    ratio = (victim_airtime_s + burst_s) / period_s
    if not math.isfinite(ratio):
        raise ValueError(f"(T_v + T_a) / D_a is not finite for {victim_airtime_s!r}, {burst_s!r}, {period_s!r}")
    k0 = math.floor(ratio)
    return OverlapCount(k0=k0, r=ratio - k0)


ALIGNED = OverlapCount(k0=1, r=0.0)


def survival_from(k0, r, hit_probability):
    """E[(1 - p)^K] for K = k0 w.p. 1 - r, k0 + 1 w.p. r; broadcasts over arrays [der]."""
    q = 1.0 - hit_probability
    return (1.0 - r) * q**k0 + r * q ** (k0 + 1)


def survival(overlap: OverlapCount, hit_probability):
    """E[(1 - p)^K]: chance that none of the overlapped bursts hits [der]."""
    return survival_from(overlap.k0, overlap.r, hit_probability)


def _log_choose(a, b):
    """ln C(a, b) for 0 <= b <= a, -inf elsewhere, a and b whole numbers; broadcasts. ln k! comes from a table
    of scipy.special.gammaln(k + 1) (looked up, not recomputed per element: this sits in the evaluation's
    innermost loop)."""
    a = np.asarray(a).astype(np.int64, copy=False)
    b = np.asarray(b).astype(np.int64, copy=False)
    ok = (b >= 0) & (b <= a)
    table = _log_factorials(int(a.max(initial=0)))
    out = table[np.clip(a, 0, None)] - table[np.clip(b, 0, None)] - table[np.clip(a - b, 0, None)]
    return np.where(ok, out, -np.inf)


_LOG_FACTORIALS = gammaln(np.arange(1, 4098, dtype=float))
_LOG_FACTORIALS.flags.writeable = False


def _log_factorials(top: int) -> np.ndarray:
    """ln k! for k = 0 .. top (at least), read-only."""
    global _LOG_FACTORIALS
    if top >= _LOG_FACTORIALS.size:
        table = gammaln(np.arange(1, 2 * top + 2, dtype=float))
        table.flags.writeable = False
        _LOG_FACTORIALS = table
    return _LOG_FACTORIALS


def distinct_survival_at(overlaps, harmful, size, activity):
    """P(no hit) for exactly K = `overlaps` dwells on distinct channels of the source's `size` channels, of which
    `harmful` hurt, each dwell active with probability `activity` (module docstring); broadcasts."""
    k = np.asarray(overlaps, dtype=np.int64)
    h = np.asarray(harmful, dtype=np.int64)
    n = np.maximum(np.asarray(size, dtype=np.int64), 1)
    keep = 1.0 - np.asarray(activity, dtype=float)
    q, m = np.divmod(k, n)
    h, n, m, q, keep = np.broadcast_arrays(h, n, m, q, keep)
    # m <= 1 (one overlapped dwell, or a whole number of periods) or no harmful channel, in closed form:
    # 1 - alpha h / N
    total = np.where(m == 0, 1.0, 1.0 - (1.0 - keep) * h / n)
    several = (m >= 2) & (h > 0)
    if several.any():
        hs, ns, ms, ks = h[several], n[several], m[several], keep[several]
        total[several] = _hypergeometric_mean_power(hs, ns, ms, ks)
    return keep ** (h * q) * total


#: Up to this many draws, the hypergeometric probabilities come from products and a recursion (exact to
#: rounding, no underflow: P(J = 0) >= N^-m > 1e-300 for N <= 10^4); beyond, from log-gamma.
_PRODUCT_DRAWS = 64


def _product_of_draws(pmf, h, n, m):
    """P(J = 0) = prod_{i < m} (n - h - i) / (n - i), element-wise."""
    for i in range(int(m.max())):
        pmf = np.where(i < m, pmf * (n - h - i) / (n - i), pmf)
    return pmf


def _hypergeometric_mean_power(h, n, m, keep):
    """E[keep^J], J ~ Hypergeometric(population n, h marked, m drawn), element-wise over 1-d arrays."""
    out = np.empty(h.shape)
    fast = (m <= _PRODUCT_DRAWS) & (n - h >= m)  # P(J = 0) > 0 and its product is short
    if fast.any():
        hf, nf, mf, kf = h[fast], n[fast], m[fast], keep[fast]
        with np.errstate(divide="ignore", invalid="ignore"):  # the discarded branch of np.where may divide by 0
            pmf = _product_of_draws(np.ones(hf.shape), hf, nf, mf)
        acc = pmf.copy()
        for j in range(int(np.minimum(hf, mf).max())):  # P(J = j + 1) from P(J = j)
            ratio = (hf - j) * (mf - j) / ((j + 1.0) * (nf - hf - mf + j + 1.0))
            pmf = np.where(j < np.minimum(hf, mf), pmf * ratio, 0.0)
            acc += pmf * kf ** (j + 1)
        out[fast] = acc
    slow = ~fast
    if slow.any():
        hs, ns, ms, ks = h[slow], n[slow], m[slow], keep[slow]
        ln_all = _log_choose(ns, ms)
        acc = np.zeros(hs.shape)
        for j in range(int(np.minimum(hs, ms).max(initial=0)) + 1):
            acc += np.exp(_log_choose(hs, j) + _log_choose(ns - hs, ms - j) - ln_all) * ks**j
        out[slow] = acc
    return out


def survival_distinct(k0, r, harmful, size, activity):
    """E over K in {k0, k0 + 1} (P(K = k0 + 1) = r) of P(no hit | K) with the K dwells on distinct channels
    (module docstring); broadcasts over arrays."""
    k0 = np.asarray(k0, dtype=np.int64)
    r = np.asarray(r, dtype=float)
    low = distinct_survival_at(k0, harmful, size, activity)
    high = distinct_survival_at(k0 + 1, harmful, size, activity)
    return (1.0 - r) * low + r * high


# --- soft harm: each channel of the source hurts with its own probability ------------------------------------

def near_symmetric(counts, keeps, degree: int):
    """e_j, j = 0 .. degree, of the multiset holding keeps[t] (real or complex) counts[t] times (the elementary symmetric polynomials
    [der: prod_t (1 + y_t z)^(n_t) expanded]), over leading axes: counts and keeps are sequences of arrays of one
    shape; returns (..., degree + 1)."""
    shape = np.shape(counts[0]) if counts else ()
    dtype = np.result_type(float, *[np.asarray(y).dtype for y in keeps])  # complex keeps: the joint law's points
    e = np.zeros(shape + (degree + 1,), dtype=dtype)
    e[..., 0] = 1.0
    for n, y in zip(counts, keeps):
        n = np.asarray(n, dtype=float)
        y = np.broadcast_to(np.asarray(y, dtype=dtype), shape)
        out = e.copy()
        binom, power = np.ones(shape), np.ones(shape)
        for i in range(1, degree + 1):  # C(n, i) y^i e_{j - i}
            binom = binom * np.maximum(n - (i - 1), 0.0) / i
            power = power * y
            if not binom.any():
                break
            out[..., i:] += (binom * power)[..., None] * e[..., :degree + 1 - i]
        e = out
    return e


def distinct_survival_weighted(k, near_e, near_count, near_product, far_count, far_keep, size):
    """P(no hit | K = k) for K dwells on distinct channels of the source's `size` channels, a dwell on channel j
    being survived with probability y_j = 1 - alpha rho_j: E over uniform K-subsets of prod y
    = (prod_all y)^q e_m(y) / C(N, m), q, m = divmod(K, N) [der: each m-subset equally likely]. The channels
    come as `near_count` 'near' ones (their e_j in near_e[..., j], their product near_product) and `far_count`
    others all with y = far_keep: e_m(y) = sum_j e_j(near) C(far, m - j) far_keep^(m - j). With y in {1 - alpha,
    1} this is `distinct_survival_at`'s hypergeometric form; broadcasts over leading axes."""
    k = np.asarray(k, dtype=np.int64)
    n = np.maximum(np.asarray(size, dtype=np.int64), 1)
    q, m = np.divmod(k, n)
    far = np.asarray(far_count, dtype=float)
    y_far = np.asarray(far_keep)
    y_far = y_far.astype(np.result_type(float, y_far.dtype, near_e.dtype), copy=False)  # complex: the joint law
    whole = bool(np.any(q > 0))  # some K covers the hop set at least once: the product over every channel counts
    full = near_product * y_far ** far if whole else None  # prod of y over every channel
    shape = np.broadcast_shapes(np.shape(m), np.shape(far), np.shape(y_far), np.shape(n), np.shape(q),
                                np.shape(near_product), near_e.shape[:-1])
    m, far, y_far, n = (np.broadcast_to(a, shape) for a in (m, far, y_far, n))
    e1 = near_e[..., 1] if near_e.shape[-1] > 1 else np.zeros(near_e.shape[:-1])
    # m <= 1 in closed form: e_0 = 1, e_1 / N = the mean of y over the channels
    acc = np.where(m == 0, 1.0, (np.broadcast_to(e1, shape) + far * y_far) / n)
    several = m >= 2
    if several.any():
        acc = acc.copy()
        e = np.broadcast_to(near_e, shape + near_e.shape[-1:])[several]
        near = np.broadcast_to(np.asarray(near_count), shape)[several]
        ms, fs, ys = m[several], far[several], y_far[several]
        ln_all = _log_choose(n[several], ms)
        part = np.zeros(ms.shape, dtype=np.result_type(e.dtype, ys.dtype))
        top = e.shape[-1] - 1
        power = ys ** np.maximum(ms - top, 0)  # y^max(m - j, 0), j from top down: one power, then products
        for j in range(top, -1, -1):
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                w = np.exp(_log_choose(fs, ms - j) - ln_all) * power
            part += np.where((ms >= j) & (j <= near), e[:, j] * w, 0.0)
            if j:
                power = np.where(ms >= j, power * ys, power)
        acc[several] = part
    return full**q * acc if whole else acc
