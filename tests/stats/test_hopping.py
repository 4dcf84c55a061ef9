"""Hopping-sequence theory against the published family properties and bounds, and brute force."""

import numpy as np
import pytest

from hypothesis import given, settings
from hypothesis import strategies as st

from cohop.stats import hopping as theory


@pytest.mark.parametrize("p", [5, 7, 11, 13, 17])
def test_one_coincidence_family(p):
    # Titlebaum 1981; Shaar and Davies 1984: s_a(t) = a t mod p, a = 1..p-1: any two members coincide
    # exactly once per period at every shift (H_c = 1), each symbol once per period (H_a = 0).
    family = theory.linear_congruence_family(p)
    assert len(family) == p - 1
    for seq in family:
        assert sorted(seq.tolist()) == list(range(p))
        assert theory.max_auto_correlation(seq) == 0
    for i, x in enumerate(family):
        for y in family[i + 1:]:
            assert theory.hamming_correlation(x, y).tolist() == [1] * p
    assert theory.max_cross_correlation(family) == 1


@pytest.mark.parametrize("p", [5, 7, 11, 13])
def test_family_meets_the_peng_fan_bound(p):
    # Peng and Fan 2004 (wording from memory): the bound for M = p - 1 sequences of length p over p symbols
    # is 1, which the family attains (verified by brute force above).
    assert theory.peng_fan_bound(p, p - 1, p) == 1 == theory.max_cross_correlation(theory.linear_congruence_family(p))


def test_peng_fan_bound_worked_values():
    # Hand computed from the formula: L = 10, M = 3, q = 5: ceil(((30 - 5) 10) / (29 * 5)) = ceil(250/145) = 2;
    # L = 20, M = 4, q = 10: ceil((70 * 20) / (79 * 10)) = ceil(1.772) = 2.
    assert theory.peng_fan_bound(10, 3, 5) == 2
    assert theory.peng_fan_bound(20, 4, 10) == 2


def test_common_relabelling_keeps_the_correlation():
    # Relabelling every member with one permutation of the channels keeps the Hamming correlation (Shaar and
    # Davies 1984): coincidences are equalities, which a bijection preserves.
    rng = np.random.default_rng(4)
    p = 11
    perm = rng.permutation(p)
    family = [perm[s] for s in theory.linear_congruence_family(p)]
    assert theory.max_cross_correlation(family) == 1


def test_coincidences_over_a_common_period():
    x = np.array([0, 1, 2])
    y = np.array([0, 1, 2, 3, 4, 5])
    best, period = theory.coincidences_over_common_period(x, y)
    assert period == 6
    # x repeated is 0 1 2 0 1 2; y shifted by 0 gives 0 1 2 3 4 5: three coincidences, the most possible.
    assert best == 3


def test_coherence_bandwidth_and_correlation():
    # Jakes; Boccuzzi ch. 3: r = 1 / (1 + (2 pi df sigma)^2), B_c = 1 / (2 pi sigma) at r = 0.5.
    sigma = 100e-9  # Rappaport 1989: median factory RMS delay spread
    bc = theory.coherence_bandwidth_hz(sigma)
    assert bc == pytest.approx(1.5915e6, rel=1e-4)
    assert theory.envelope_correlation(bc, sigma) == pytest.approx(0.5)
    assert theory.envelope_correlation(0.0, sigma) == 1.0
    # Rules of thumb (Rappaport, from memory): 1/(50 sigma) gives r > 0.9, 1/(5 sigma) about 0.5
    assert theory.envelope_correlation(1 / (50 * sigma), sigma) > 0.9
    assert theory.envelope_correlation(1 / (5 * sigma), sigma) == pytest.approx(0.388, abs=0.01)


def test_order_statistics_and_visits():
    assert theory.order_statistics(np.arange(10))[2] is False  # a staircase is not random-looking
    assert theory.max_visits_in_window([0, 1, 2, 3], 2, 4) == 1
    assert theory.max_visits_in_window([0, 1, 0, 2], 0, 3) == 2
    assert theory.max_visits_in_window([0, 1, 2, 3], 1, 9) == 3  # windows of 9 hops see 2 or 3 visits


def _brute_counts(x, y) -> list[int]:
    """H_xy(tau) for tau = 0..lcm-1, walking the whole common period (the definition)."""
    x, y = np.asarray(x), np.asarray(y)
    period = int(np.lcm(x.size, y.size))
    t = np.arange(period)
    return [int(np.count_nonzero(x[t % x.size] == y[(t + tau) % y.size])) for tau in range(period)]


sequences = st.lists(st.integers(0, 6), min_size=1, max_size=14)


@settings(max_examples=300, deadline=None)
@given(sequences, sequences)
def test_counting_by_offset_class_matches_walking_the_common_period(x, y):
    # The Chinese-remainder count (module docstring) against the definition, every shift of the period.
    counts = theory.coincidence_counts(x, y)
    brute = _brute_counts(x, y)
    g = np.gcd(len(x), len(y))
    assert counts.size == g
    assert brute == [int(counts[tau % g]) for tau in range(len(brute))]
    assert theory.coincidences_over_common_period(x, y) == (max(brute), len(brute))


def test_heavily_repeated_channels_are_counted_by_fft_exactly():
    # 60 visits to channel 0 in x and 45 in y over a gcd of 15: 2700 pairs > 8 x 15, the FFT path.
    rng = np.random.default_rng(3)
    x = np.where(rng.random(120) < 0.5, 0, rng.integers(1, 9, 120))
    y = np.where(rng.random(90) < 0.5, 0, rng.integers(1, 9, 90))
    counts = theory.coincidence_counts(x, y)
    assert [int(counts[tau % 30]) for tau in range(360)] == _brute_counts(x, y)


def test_coprime_lengths_at_the_cap_are_counted_without_the_common_period():
    # 8191 and 8192 hops (the hostile corpus' case): the common period is 67 million hops, but g = 1, so
    # every coincidence falls in one class: the 8191 shared channels meet once each.
    x, y = np.arange(8191), np.arange(8192)
    best, period = theory.coincidences_over_common_period(x, y)
    assert (best, period) == (8191, 8191 * 8192)


@settings(max_examples=100, deadline=None)
@given(st.lists(sequences, min_size=2, max_size=4))
def test_all_pairs_at_once_match_pair_by_pair(orders):
    matrix = theory.max_coincidences_between(orders)
    for i, x in enumerate(orders):
        for j, y in enumerate(orders):
            if i != j:
                assert matrix[i, j] == max(_brute_counts(x, y))
    assert theory.max_coincidences_between(orders, work=0) is None or matrix.max() == 0


def test_the_family_with_a_shared_prime_set_is_one_coincidence_all_pairs_at_once():
    # Titlebaum 1981: s_a(t) = a t mod p meet exactly once per period at every shift.
    family = theory.linear_congruence_family(13)
    matrix = theory.max_coincidences_between(family)
    assert (matrix + np.eye(12, dtype=int) == 1).all()
