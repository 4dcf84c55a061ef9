"""Time overlap and retry formulas (geometric probability of a uniformly random relative phase, and independent retries as in Garg, "Wireless Communications and Networking", ch. 21; derived, checked by hand)."""

import pytest

from cohop.stats import retries
from cohop.stats.overlap import ALIGNED, random_phase_overlap, survival


@pytest.mark.parametrize("tv, ta, d", [(0.002, 0.003, 0.01), (0.01, 0.01, 0.02), (0.0005, 0.0005, 0.1)])
def test_short_packets_overlap_at_most_one_burst(tv, ta, d):
    # Uniform phase over one period D (geometric probability, derived): P0 = 1 - (Tv + Ta)/D, P1 = (Tv + Ta)/D when Tv + Ta <= D.
    probs = random_phase_overlap(tv, ta, d).probabilities()
    w = (tv + ta) / d
    assert probs.get(0, 0.0) == pytest.approx(1 - w)
    assert probs.get(1, 0.0) == pytest.approx(w)
    assert 2 not in probs


@pytest.mark.parametrize("tv, ta, d", [(0.01, 0.008, 0.012), (0.02, 0.02, 0.02), (0.015, 0.01, 0.02)])
def test_long_packets_overlap_one_or_two(tv, ta, d):
    # Uniform phase over one period D (geometric probability, derived): P2 = (Tv + Ta - D)/D, P1 = 1 - P2 when D < Tv + Ta <= 2D.
    probs = random_phase_overlap(tv, ta, d).probabilities()
    p2 = (tv + ta - d) / d
    assert probs.get(2, 0.0) == pytest.approx(p2)
    assert probs.get(1, 0.0) == pytest.approx(1 - p2)
    assert 0 not in probs


def test_mean_overlap_is_window_over_period():
    # E[K] = (Tv + Ta) / D for any ratio (linearity of expectation over a uniform phase: derived).
    for tv, ta, d in [(0.001, 0.004, 0.01), (0.03, 0.02, 0.02), (0.1, 0.1, 0.03)]:
        assert random_phase_overlap(tv, ta, d).mean == pytest.approx((tv + ta) / d)


def test_survival_is_the_reference_polynomial():
    # s = P0 + P1 (1 - p) + P2 (1 - p)^2 (total probability over the number of overlaps K: derived).
    ov = random_phase_overlap(0.01, 0.008, 0.012)
    p = 0.07
    probs = ov.probabilities()
    expected = sum(prob * (1 - p) ** k for k, prob in probs.items())
    assert survival(ov, p) == pytest.approx(expected)


def test_aligned_overlap_is_exactly_one():
    assert ALIGNED.probabilities() == {1: 1.0}
    assert survival(ALIGNED, 0.2) == pytest.approx(0.8)


@pytest.mark.parametrize("p, k", [(0.1, 0), (0.1, 3), (0.3, 5), (0.02, 1)])
def test_residual_and_expected_attempts(p, k):
    # Independent attempts: residual p^(k+1); expected attempts (1 - p^(k+1)) / (1 - p)
    # (geometric series, common practice).
    assert retries.residual_loss(p, k) == pytest.approx(p ** (k + 1))
    assert retries.expected_attempts(p, k) == pytest.approx((1 - p ** (k + 1)) / (1 - p))


def test_combination_of_independent_losses():
    assert retries.combine_independent(0.1, 0.2) == pytest.approx(1 - 0.9 * 0.8)
    assert retries.per_attempt(0.1, 2) == pytest.approx(1 - 0.9**2)
