"""cohop.stats.runs against enumeration, first-step analysis, numerical integration and simulation."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy import integrate, special

from cohop.stats import runs


def _enumerated_run_within(p: float, m: int, n: int) -> float:
    """Brute force: every loss pattern of n independent trials, its probability, whether it holds m losses
    in a row."""
    total = 0.0
    for pattern in itertools.product((0, 1), repeat=n):
        longest = run = 0
        for lost in pattern:
            run = run + 1 if lost else 0
            longest = max(longest, run)
        if longest >= m:
            total += math.prod(p if lost else 1 - p for lost in pattern)
    return total


@pytest.mark.parametrize("p,m,n", [(0.3, 3, 10), (0.7, 2, 9), (0.5, 4, 12)])
def test_feller_run_within_n_matches_enumeration(p, m, n):
    # Feller vol. 1 ch. XIII.7 recursion (as recalled), checked against direct enumeration of 2^n patterns
    assert runs.run_within(p, m, n) == pytest.approx(_enumerated_run_within(p, m, n), rel=1e-12)


@pytest.mark.parametrize("p,m", [(0.3, 3), (0.05, 2), (0.9, 6)])
def test_feller_mean_trials_matches_first_step_analysis(p, m):
    # Feller's (1 - p^m) / ((1 - p) p^m) against first-step analysis of the run-length chain (common
    # practice): E_i = 1 + p E_(i+1) + (1 - p) E_0, E_m = 0
    a = np.zeros((m, m))
    b = np.ones(m)
    for i in range(m):
        a[i, i] += 1.0
        a[i, 0] -= 1 - p
        if i + 1 < m:
            a[i, i + 1] -= p
    expected = np.linalg.solve(a, b)[0]
    assert runs.mean_trials_to_run(p, m) == pytest.approx(expected, rel=1e-10)
    # and the recursion's first-occurrence distribution has that mean (Feller XIII.3 renewal equation)
    if expected < 100:
        n = 4000
        f = runs.first_run_probabilities(p, m, n)
        assert float(np.arange(n + 1) @ f) == pytest.approx(expected, rel=1e-6)


def test_gilbert_elliott_stationary_and_correlation():
    # Gilbert (1960) / Elliott (1963) two-state chain, parametrised by P(bad) and lag-one correlation
    pi, rho = 0.2, 0.6
    t = runs.gilbert_elliott(pi, rho)
    stat = np.array([1 - pi, pi])
    assert stat @ t == pytest.approx(stat)
    both_bad = pi * t[1, 1]
    assert (both_bad - pi**2) / (pi * (1 - pi)) == pytest.approx(rho)


@pytest.mark.parametrize("a,rho", [(0.1, 0.6), (0.05, 0.9), (0.5, 0.3)])
def test_joint_fade_probability_matches_integrated_density(a, rho):
    # Kibble's bivariate exponential density (Kibble 1941; Moran's form):
    # f(x, y) = exp(-(x + y) / (1 - rho)) I0(2 sqrt(rho x y) / (1 - rho)) / (1 - rho)
    def density(y, x):
        return np.exp(-(x + y) / (1 - rho)) * special.i0(2 * np.sqrt(rho * x * y) / (1 - rho)) / (1 - rho)

    expected = integrate.dblquad(density, 0, a, 0, a, epsabs=1e-13)[0]
    assert float(runs.joint_fade_probability(a, rho)) == pytest.approx(expected, rel=1e-7)


def test_joint_fade_probability_matches_simulated_rayleigh_pairs():
    # Two complex Gaussian gains with correlation sqrt(rho): their powers have power correlation rho
    # (Jakes 1974, ch. 1: |complex correlation|^2 for Rayleigh powers). Seeded; 4 standard errors.
    rng = np.random.default_rng(7)
    n, rho, a = 400_000, 0.7, 0.2
    g1 = (rng.standard_normal(n) + 1j * rng.standard_normal(n)) / math.sqrt(2)
    w = (rng.standard_normal(n) + 1j * rng.standard_normal(n)) / math.sqrt(2)
    g2 = math.sqrt(rho) * g1 + math.sqrt(1 - rho) * w
    hits = np.mean((np.abs(g1) ** 2 < a) & (np.abs(g2) ** 2 < a))
    p = float(runs.joint_fade_probability(a, rho))
    assert abs(hits - p) < 4 * math.sqrt(p * (1 - p) / n)


def test_joint_fade_limits():
    a = 0.3
    assert float(runs.joint_fade_probability(a, 0.0)) == pytest.approx((1 - math.exp(-a)) ** 2, rel=1e-12)
    assert float(runs.joint_fade_probability(a, 1.0)) == pytest.approx(1 - math.exp(-a), rel=1e-12)
    values = runs.joint_fade_probability(a, np.linspace(0, 0.999, 30))
    assert np.all(np.diff(values) > 0)  # more correlation, more joint fades


def test_fade_transitions_keep_the_marginal():
    f = 0.08
    t = runs.fade_transitions(f, np.array([0.0, 0.4, 0.95]))
    stat = np.array([1 - f, f])
    for m in t:
        assert m.sum(axis=1) == pytest.approx([1, 1])
        assert stat @ m == pytest.approx(stat)
    assert t[0, 0, 1] == pytest.approx(f) and t[0, 1, 1] == pytest.approx(f)  # rho = 0: independent
    assert t[2, 1, 1] > t[1, 1, 1] > t[0, 1, 1]


def _rician_pairs(k: float, rho: float, n: int, seed: int):
    """Unit-mean Rician powers of two hops, line of sight fixed, diffuse parts with complex correlation
    sqrt(rho): the construction of the sequence-driven simulation (cohop.sequences.simulate)."""
    rng = np.random.default_rng(seed)
    g1 = (rng.standard_normal(n) + 1j * rng.standard_normal(n)) / math.sqrt(2)
    w = (rng.standard_normal(n) + 1j * rng.standard_normal(n)) / math.sqrt(2)
    g2 = math.sqrt(rho) * g1 + math.sqrt(1 - rho) * w
    nu, sd = math.sqrt(k / (k + 1)), math.sqrt(1 / (k + 1))
    return np.abs(nu + sd * g1) ** 2, np.abs(nu + sd * g2) ** 2


@pytest.mark.parametrize("k_db,rho", [(6.0, 0.7), (10.0, 0.3)])
def test_rician_joint_fades_match_simulated_pairs(k_db, rho):
    k, a = 10 ** (k_db / 10), 10 ** (-8 / 10)
    p1, p2 = _rician_pairs(k, rho, 1_000_000, 11)
    hits = float(np.mean((p1 < a) & (p2 < a)))
    p = float(runs.rician_joint_fade_probability(a, k, rho)[0])
    assert abs(hits - p) < 4 * math.sqrt(p * (1 - p) / 1_000_000) + 1e-6


def test_rician_joint_fades_limits():
    from cohop.physics.fading import rician_fade_probability

    # K -> 0 is Rayleigh (Kibble's form); rho = 1 is the marginal (Rice, via scipy's ncx2 in physics.fading)
    assert float(runs.rician_joint_fade_probability(0.1, 1e-9, 0.6)[0]) == pytest.approx(
        float(runs.joint_fade_probability(0.1, 0.6)), rel=1e-6)
    k_db, margin = 6.0, 10.0
    f = float(rician_fade_probability(margin, k_db))
    assert float(runs.rician_joint_fade_probability(10 ** (-margin / 10), 10 ** (k_db / 10), 1.0)[0]) == \
        pytest.approx(f, rel=1e-6)
