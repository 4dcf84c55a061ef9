"""Sequence theory against the published family properties and bounds (brute force)."""

import numpy as np
import pytest

from cohop.sequences import theory


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
    # Relabelling every member with one permutation of the channels keeps the Hamming correlation (domain
    # reference section 5): coincidences are equalities, which a bijection preserves.
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
