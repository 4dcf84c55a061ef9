"""A packet that spans several of a neighbour's dwells meets distinct channels, not independent draws.

Checks, each against an outside source:
- the domain reference's worked example ("several dwells in one packet", derived and checked by simulation):
  a 20 ms packet against 5 ms dwells over 20 channels with one harmful is hit with probability 5/20 = 0.25,
  not 1 - (19/20)^5 = 0.226;
- exhaustive enumeration of every permutation hop order and every phase (the definition of the model) equals
  the hypergeometric form, with and without partial activity, and for a window longer than the period;
- the sequence-driven simulation along a real permutation order and the Monte Carlo agree with the
  analytic figure within their intervals.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from cohop.assess import assess_site
from cohop.montecarlo import simulate_site
from cohop.prepare import prepare_site
from cohop.sequences import simulate
from cohop.stats.overlap import distinct_survival_at, random_phase_overlap
from tests import sites

NONE = {"model": "none"}


def _example_site():
    """The reference's example: the victim on channel 5, the source over channels 0..19 with 5 ms dwells
    and bursts (K = (20 + 5) / 5 = 5 exactly); co-channel harm only (window 0)."""
    victim = sites.system("v", [5], dwell_s=0.02, packet_airtime_s=0.02, retry_limit=0, fading=NONE)
    source = sites.system("a", range(20), dwell_s=0.005, packet_airtime_s=0.005, fading=NONE)
    return prepare_site(sites.load(sites.site([victim, source], n_channels=20)))


def test_the_reference_example_is_one_in_four():
    prep = _example_site()
    assert prep.window[0, 1] == 0 and random_phase_overlap(0.02, 0.005, 0.005).probabilities() == {5: 1.0}
    hit = assess_site(prep).systems[0].collision_probability
    assert hit == pytest.approx(0.25, abs=1e-12)
    assert abs(hit - (1 - (19 / 20) ** 5)) > 0.02  # the independent-draw figure is not what is reported


def test_a_real_permutation_order_and_the_monte_carlo_agree():
    prep = _example_site()
    order = np.random.default_rng(7).permutation(20)
    sim = simulate.simulate_retries(prep, [np.array([5]), order], 0, 40_000, 11, 100e-9)
    sd = math.sqrt(0.25 * 0.75 / 40_000)
    assert abs(sim.attempt_loss - 0.25) < 5 * sd, sim.attempt_loss
    mc = simulate_site(prep, 40_000, seed=5).systems[0].collision
    lo, hi = mc.interval()
    assert lo <= 0.25 <= hi, (mc.probability, lo, hi)


def _enumerated(n: int, harmful: set[int], k: int, alpha: float) -> float:
    """Mean over every permutation order of n channels and every start of P(no hit) over k consecutive
    dwells, each dwell active with alpha independently."""
    total, count = 0.0, 0
    for order in itertools.permutations(range(n)):
        for start in range(n):
            inside = sum(order[(start + i) % n] in harmful for i in range(k))
            total += (1.0 - alpha) ** inside
            count += 1
    return total / count


@pytest.mark.parametrize("n, h, k, alpha", [(6, 2, 3, 1.0), (6, 2, 3, 0.5), (6, 1, 4, 0.3), (6, 2, 8, 0.4),
                                            (5, 5, 2, 0.25), (6, 0, 3, 1.0), (6, 3, 1, 0.7)])
def test_every_permutation_and_phase_gives_the_hypergeometric_form(n, h, k, alpha):
    want = _enumerated(n, set(range(h)), k, alpha)
    assert distinct_survival_at(k, h, n, alpha) == pytest.approx(want, rel=1e-12, abs=1e-15)


def test_full_activity_within_one_period_is_a_ratio_of_binomials():
    # P(no hit) = C(N - h, K) / C(N, K) (hypergeometric, zero successes)
    for n, h, k in [(20, 1, 5), (79, 3, 7), (50, 10, 49)]:
        assert distinct_survival_at(k, h, n, 1.0) == pytest.approx(math.comb(n - h, k) / math.comb(n, k),
                                                                  rel=1e-10)


@pytest.mark.parametrize("victim_packet_s, overlaps", [(0.010, 3), (0.0125, 3.5)])
def test_the_monte_carlo_draws_distinct_channels_dwell_by_dwell(victim_packet_s, overlaps):
    """Windows of up to four dwells are drawn dwell by dwell without replacement; here K = 3, or 3 and 4 with
    equal odds, against h = 3 harmful channels of 20 (window 1), 60 % activity: the Monte Carlo's interval
    holds the hypergeometric figure, and the independent-draw figure lies outside it."""
    victim = sites.system("v", [5], dwell_s=0.02, packet_airtime_s=victim_packet_s, retry_limit=0, fading=NONE)
    source = sites.system("a", range(20), dwell_s=0.005, packet_airtime_s=0.005, activity_fraction=0.6,
                          fading=NONE)
    prep = prepare_site(sites.load(sites.site([victim, source], coupling_loss_db=50.0, n_channels=20)))
    assert prep.window[0, 1] == 1
    k0 = int(overlaps)
    r = overlaps - k0
    want = 1 - ((1 - r) * distinct_survival_at(k0, 3, 20, 0.6) + r * distinct_survival_at(k0 + 1, 3, 20, 0.6))
    independent = 1 - ((1 - r) * (1 - 0.6 * 3 / 20) ** k0 + r * (1 - 0.6 * 3 / 20) ** (k0 + 1))
    assert assess_site(prep).systems[0].collision_probability == pytest.approx(want, rel=1e-12)
    lo, hi = simulate_site(prep, 400_000, seed=3).systems[0].collision.interval()
    assert lo <= want <= hi and not lo <= independent <= hi, (lo, hi, want, independent)
