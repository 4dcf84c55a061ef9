"""Sequence theory: Hamming correlation, the one-coincidence family, the Peng-Fan bound, fading correlation.

All functions are pure.

References
----------
[1] Titlebaum, "Time-frequency hop signals, part I: coding based upon the
    theory of linear congruences", IEEE Trans. AES 17(4), 1981; Shaar and
    Davies, "A survey of one-coincidence sequences for frequency-hopped
    spread-spectrum systems", IEE Proc. F 131(7), 1984: s_a(t) = a t mod p,
    a = 1..p-1, t = 0..p-1; any two members coincide exactly once per period
    at every shift.
[2] Peng and Fan, "Lower bounds on the Hamming auto- and cross correlations
    of frequency-hopping sequences", IEEE Trans. Inf. Theory 50(9), 2004:
    H_m >= ceil(((L M - q) L) / ((L M - 1) q)) for M sequences of length L
    over q symbols (wording from memory; values for a t mod p verified by
    brute force in the tests).
[3] Jakes; Boccuzzi, "Signal Processing for Wireless Communications", ch. 3:
    envelope correlation of fading at two frequencies df apart,
    r = 1 / (1 + (2 pi df sigma_tau)^2); coherence bandwidth 1 / (2 pi sigma_tau)
    at r = 0.5.
[4] Rappaport 1989 (factory buildings): RMS delay spreads 30-300 ns, median
    about 100 ns.
"""

from __future__ import annotations

import math

import numpy as np

#: [4] median factory RMS delay spread, our default when a site gives none.
DEFAULT_RMS_DELAY_SPREAD_S = 100e-9


def hamming_correlation(x, y) -> np.ndarray:
    """H_xy(tau) = sum_t [x_t = y_(t + tau mod L)] for equal-length sequences, every tau."""
    x, y = np.asarray(x), np.asarray(y)
    if x.size != y.size:
        raise ValueError("equal lengths required; use coincidences_over_common_period")
    return np.array([int(np.count_nonzero(x == np.roll(y, -tau))) for tau in range(y.size)])


def max_auto_correlation(x) -> int:
    """H_a = max over tau != 0 of H_xx(tau)."""
    h = hamming_correlation(x, x)
    return int(h[1:].max()) if h.size > 1 else 0


def max_cross_correlation(family) -> int:
    """H_c = max over distinct members and every tau."""
    best = 0
    for i in range(len(family)):
        for j in range(len(family)):
            if i != j:
                best = max(best, int(hamming_correlation(family[i], family[j]).max()))
    return best


def coincidences_over_common_period(x, y) -> tuple[int, int]:
    """Most coincidences over lcm(L_x, L_y) hops at any integer hop offset, and that period.

    For sequences hopping at the same rate with different periods, the
    pattern of coincidences repeats every lcm(L_x, L_y) hops.
    """
    x, y = np.asarray(x), np.asarray(y)
    period = math.lcm(x.size, y.size)
    t = np.arange(period)
    xs = x[t % x.size]
    best = 0
    for tau in range(y.size):
        best = max(best, int(np.count_nonzero(xs == y[(t + tau) % y.size])))
    return best, period


def is_prime(n: int) -> bool:
    if n < 2:
        return False
    return all(n % k for k in range(2, int(math.isqrt(n)) + 1))


def prime_at_least(n: int) -> int:
    p = max(2, n)
    while not is_prime(p):
        p += 1
    return p


def linear_congruence_family(p: int) -> list[np.ndarray]:
    """[1] s_a(t) = a t mod p for a = 1..p-1, t = 0..p-1."""
    if not is_prime(p):
        raise ValueError(f"{p} is not prime")
    t = np.arange(p)
    return [(a * t) % p for a in range(1, p)]


def peng_fan_bound(length: int, members: int, symbols: int) -> int:
    """[2] lower bound on the maximum Hamming correlation of a family."""
    if members * length <= 1:
        return 0
    value = ((length * members - symbols) * length) / ((length * members - 1) * symbols)
    return max(0, math.ceil(value - 1e-12))


def envelope_correlation(df_hz, rms_delay_spread_s: float):
    """[3] r = 1 / (1 + (2 pi df sigma_tau)^2)."""
    df = np.asarray(df_hz, dtype=float)
    return 1.0 / (1.0 + (2.0 * math.pi * df * rms_delay_spread_s) ** 2)


def coherence_bandwidth_hz(rms_delay_spread_s: float) -> float:
    """[3] frequency separation at which r = 0.5: 1 / (2 pi sigma_tau)."""
    return 1.0 / (2.0 * math.pi * rms_delay_spread_s)


def order_statistics(channels) -> tuple[float, int, bool]:
    """Share of direction reversals between consecutive steps, number of distinct step sizes, and our
    screening verdict for "random in direction and magnitude" (47 CFR 2.1's wording): reversals between
    20 % and 95 % of steps and at least a fifth of the steps of distinct size. Our own screening, not a
    regulator's test."""
    ch = np.asarray(channels)
    n = ch.size
    steps = np.diff(np.concatenate([ch, ch[:1]])) if n > 1 else np.zeros(1, dtype=int)
    signs = np.sign(steps[steps != 0])
    reversals = float(np.mean(signs[1:] != signs[:-1])) if signs.size > 1 else 0.0
    distinct = int(np.unique(np.abs(steps)).size)
    looks_random = n < 4 or (0.2 <= reversals <= 0.95 and distinct >= max(2, int(0.2 * (n - 1))))
    return reversals, distinct, bool(looks_random)


def max_visits_in_window(sequence, channel: int, window_slots: float) -> int:
    """Most visits to `channel` by the periodic `sequence` in any window of `window_slots` hops."""
    seq = np.asarray(sequence)
    period = seq.size
    where = np.flatnonzero(seq == channel)
    if where.size == 0:
        return 0
    reps = int(math.ceil(window_slots / period)) + 2
    ext = np.sort((where[None, :] + period * np.arange(reps)[:, None]).ravel())
    ends = np.searchsorted(ext, ext + window_slots - 1e-9, side="left")
    return int((ends - np.arange(ext.size)).max())
