"""Hopping-sequence theory: Hamming correlation, the one-coincidence family, the Peng-Fan bound, fading
correlation across a hop, order screening and occupancy windows.

All functions are pure.

References
----------
[1] T. A. Titlebaum, "Time-frequency hop signals, part I: coding based upon the
    theory of linear congruences", IEEE Trans. Aerospace and Electronic Systems
    17(4), 1981; A. A. Shaar and P. A. Davies, "A survey of one-coincidence
    sequences for frequency-hopped spread-spectrum systems", IEE Proceedings F
    131(7), 1984: s_a(t) = a t mod p, a = 1..p-1, t = 0..p-1; any two members
    coincide exactly once per period at every shift.
[2] A. Lempel and H. Greenberger, "Families of sequences with optimal Hamming
    correlation properties", IEEE Trans. Inf. Theory 20(1), 1974: the periodic
    Hamming correlation H_xy(tau) = sum_t [x_t = y_(t + tau)].
[3] D. Peng and P. Fan, "Lower bounds on the Hamming auto- and cross
    correlations of frequency-hopping sequences", IEEE Trans. Inf. Theory
    50(9), 2004: H_m >= ceil(((L M - q) L) / ((L M - 1) q)) for M sequences of
    length L over q symbols (wording from memory; the values for a t mod p are
    checked by brute force in the tests).
[4] W. C. Jakes (ed.), "Microwave Mobile Communications", Wiley, 1974, ch. 1;
    F. Boccuzzi, "Signal Processing for Wireless Communications", McGraw-Hill,
    2008, ch. 3: envelope correlation of fading at two frequencies df apart,
    r = 1 / (1 + (2 pi df sigma_tau)^2); coherence bandwidth 1 / (2 pi sigma_tau)
    at r = 0.5.
[5] T. S. Rappaport, "Characterization of UHF multipath radio channels in
    factory buildings", IEEE Trans. Antennas and Propagation 37(8), 1989: RMS
    delay spreads 30-300 ns, median about 100 ns.
[6] 47 CFR 2.1 ("frequency hopping": the carrier frequency changes in a
    sequence that is random in direction and magnitude, wording from memory).

Coincidences of sequences of different periods [der]: x of period L_x and y
of period L_y, g = gcd(L_x, L_y), P = lcm(L_x, L_y). Over one common period
at shift tau, H_xy(tau) = #{t in [0, P): x_(t mod L_x) = y_((t + tau) mod L_y)}.
For a pair of positions (i, j) with x_i = y_j, the Chinese remainder theorem
gives exactly one t in [0, P) with t = i (mod L_x) and t + tau = j (mod L_y)
when j - i = tau (mod g), and none otherwise. Hence
    H_xy(tau) = #{(i, j): x_i = y_j, j - i = tau (mod g)},
which depends on tau mod g only: each of the g classes recurs L_y / g times
among the shifts 0..L_y-1. `coincidence_counts` counts the pairs channel by
channel, so its work is about L_x + L_y (plus an FFT per heavily repeated
channel), never P.
"""

from __future__ import annotations

import math

import numpy as np

#: [5] median factory RMS delay spread, our default when a site gives none.
DEFAULT_RMS_DELAY_SPREAD_S = 100e-9

#: A channel whose (occurrences in x) x (occurrences in y) exceed this many times g has its pairs
#: counted by FFT (g log g) instead of one by one.
_HEAVY_PAIRS_PER_CLASS = 8


def _occurrences(seq: np.ndarray):
    """Distinct channels of `seq`, the positions of each (grouped, ascending) and where each group starts."""
    order = np.argsort(seq, kind="stable")
    channels, starts, counts = np.unique(seq[order], return_index=True, return_counts=True)
    return channels, order, starts, counts


def _expand(starts: np.ndarray, counts: np.ndarray) -> np.ndarray:
    """Concatenated ranges [starts[k], starts[k] + counts[k]) for every k."""
    total = int(counts.sum())
    if total == 0:
        return np.zeros(0, dtype=np.int64)
    offsets = np.repeat(np.cumsum(counts) - counts, counts)
    return np.repeat(starts, counts) + (np.arange(total) - offsets)


def coincidence_counts(x, y) -> np.ndarray:
    """H_xy(tau) over one common period for tau = 0..g-1 (g = gcd of the periods; H repeats with period
    g in tau): see the module docstring."""
    x = np.asarray(x, dtype=np.int64).ravel()
    y = np.asarray(y, dtype=np.int64).ravel()
    if x.size == 0 or y.size == 0:
        return np.zeros(1, dtype=np.int64)
    g = math.gcd(x.size, y.size)
    counts = np.zeros(g, dtype=np.int64)
    cx, ox, sx, nx = _occurrences(x)
    cy, oy, sy, ny = _occurrences(y)
    _, ia, ib = np.intersect1d(cx, cy, assume_unique=True, return_indices=True)
    if ia.size == 0:
        return counts
    pairs = nx[ia] * ny[ib]
    heavy = pairs > _HEAVY_PAIRS_PER_CLASS * g
    light_a, light_b = ia[~heavy], ib[~heavy]
    if light_a.size:
        # every x position of a light channel, repeated once per y position of that channel
        xi = ox[_expand(sx[light_a], nx[light_a])]
        per_x = np.repeat(ny[light_b], nx[light_a])
        first_y = np.repeat(sy[light_b], nx[light_a])
        yj = oy[_expand(first_y, per_x)]
        counts += np.bincount((yj - np.repeat(xi, per_x)) % g, minlength=g)
    if heavy.any():
        # per heavy channel: histograms of i mod g and j mod g, cross-correlated by FFT
        hx = np.zeros((int(heavy.sum()), g))
        hy = np.zeros_like(hx)
        for row, (a, b) in enumerate(zip(ia[heavy], ib[heavy])):
            hx[row] = np.bincount(ox[sx[a]:sx[a] + nx[a]] % g, minlength=g)
            hy[row] = np.bincount(oy[sy[b]:sy[b] + ny[b]] % g, minlength=g)
        spectrum = (np.conj(np.fft.rfft(hx, axis=1)) * np.fft.rfft(hy, axis=1)).sum(axis=0)
        counts += np.rint(np.fft.irfft(spectrum, n=g)).astype(np.int64)
    return counts


def hamming_correlation(x, y) -> np.ndarray:
    """[2] H_xy(tau) = sum_t [x_t = y_(t + tau mod L)] for equal-length sequences, every tau."""
    x, y = np.asarray(x), np.asarray(y)
    if x.size != y.size:
        raise ValueError("equal lengths required; use coincidences_over_common_period")
    return coincidence_counts(x, y)


def max_auto_correlation(x) -> int:
    """H_a = max over tau != 0 of H_xx."""
    h = hamming_correlation(x, x)
    return int(h[1:].max()) if h.size > 1 else 0


def max_cross_correlation(family) -> int:
    """H_c = max over distinct members and every tau (H_yx(tau) = H_xy(-tau), so each pair once)."""
    best = 0
    for i in range(len(family)):
        for j in range(i + 1, len(family)):
            best = max(best, int(hamming_correlation(family[i], family[j]).max()))
    return best


def coincidences_over_common_period(x, y) -> tuple[int, int]:
    """Most coincidences over lcm(L_x, L_y) hops at any integer hop offset, and that period (sequences
    hopping at the same rate: the pattern repeats every lcm hops)."""
    x, y = np.asarray(x), np.asarray(y)
    return int(coincidence_counts(x, y).max()), math.lcm(x.size, y.size)


def max_coincidences_between(orders, work: int = 4_000_000) -> np.ndarray | None:
    """(M, M): the most coincidences of orders i and j (i != j) at any shift over their common period, for
    all pairs at once (0 for pairs that share no channel). Every two occurrences of one channel in
    different orders add one to their pair's class (j - i) mod gcd (see the module docstring). None when
    more than `work` pairs of occurrences would be enumerated."""
    orders = [np.asarray(o, dtype=np.int64).ravel() for o in orders]
    m = len(orders)
    out = np.zeros((m, m), dtype=np.int64)
    if m < 2:
        return out
    owner = np.concatenate([np.full(o.size, k) for k, o in enumerate(orders)])
    position = np.concatenate([np.arange(o.size) for o in orders])
    channel = np.concatenate(orders)
    order = np.lexsort((owner, channel))
    owner, position, channel = owner[order], position[order], channel[order]
    _, starts, sizes = np.unique(channel, return_index=True, return_counts=True)
    later = np.repeat(starts + sizes, sizes) - np.arange(channel.size) - 1  # occurrences after each in its group
    if int(later.sum()) > work:
        return None
    first = np.repeat(np.arange(channel.size), later)
    second = first + 1 + _expand(np.zeros(later.size, dtype=np.int64), later)
    apart = owner[first] != owner[second]
    first, second = first[apart], second[apart]
    if not first.size:
        return out
    lengths = np.array([o.size for o in orders])
    i, j = owner[first], owner[second]  # i < j: sorted by owner within a channel
    g = np.gcd(lengths[i], lengths[j])
    top = int(lengths.max())
    keys, counts = np.unique((i * m + j) * top + (position[second] - position[first]) % g, return_counts=True)
    pair = keys // top
    np.maximum.at(out.ravel(), pair, counts)
    return np.maximum(out, out.T)


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
    """[3] lower bound on the maximum Hamming correlation of a family."""
    if members * length <= 1:
        return 0
    value = ((length * members - symbols) * length) / ((length * members - 1) * symbols)
    return max(0, math.ceil(value - 1e-12))


def envelope_correlation(df_hz, rms_delay_spread_s: float):
    """[4] r = 1 / (1 + (2 pi df sigma_tau)^2)."""
    df = np.asarray(df_hz, dtype=float)
    return 1.0 / (1.0 + (2.0 * math.pi * df * rms_delay_spread_s) ** 2)


def coherence_bandwidth_hz(rms_delay_spread_s: float) -> float:
    """[4] frequency separation at which r = 0.5: 1 / (2 pi sigma_tau)."""
    return 1.0 / (2.0 * math.pi * rms_delay_spread_s)


def order_statistics(channels) -> tuple[float, int, bool]:
    """Share of direction reversals between consecutive steps, number of distinct step sizes, and our
    screening verdict for "random in direction and magnitude" ([6]): reversals between
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
