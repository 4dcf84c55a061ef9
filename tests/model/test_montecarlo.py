"""The Monte Carlo simulation agrees with the analytic model (the overlap model of cohop.stats.overlap: a uniformly random relative phase; derived, DEVELOPERS.md's model paragraph).

Fading-aware capture (closed forms, generated sites, where the evaluator's product is an approximation) is
tests/model/test_montecarlo_fading.py; `_agree` here uses its comparison.

Agreement is a test, not a proof; the published closed forms anchor the model
(test_published_forms.py). Seeds are fixed, so these tests are deterministic;
intervals are 99.9 % Wilson intervals so a correct model fails rarely for a
new seed. Per-source rates are many comparisons per site, so they get a
Bonferroni-style 99.999 % interval.
"""

import copy
import random

import pytest

from cohop import samples
from cohop.assess import assess_site
from cohop.montecarlo import SimulatedRate, simulate_site
from cohop.prepare import prepare_site
from tests import sites
from tests.model.test_montecarlo_fading import compare
from tests.model.test_recompute import _random_site

Z999 = 3.2905


def _agree(site_body: dict, trials: int, seed: int):
    """Every figure within the simulation's interval (`compare`)."""
    return compare(prepare_site(sites.load(site_body)), trials, seed)


@pytest.mark.parametrize("name", samples.names())
def test_samples(name):
    _agree(copy.deepcopy(samples.load(name)["site"]), 100_000, seed=11)


@pytest.mark.parametrize("seed", range(6))
def test_random_sites(seed):
    # Includes packets longer than several source dwells, slot-aligned groups and bursty interferers.
    _agree(_random_site(random.Random(100 + seed)), 60_000, seed=seed)


def test_aligned_piconets():
    # Slot-aligned, fully loaded: (1 - 1/N)^(n - 1) (Bray and Sturman, threshold capture: fading none) in the
    # simulation too.
    systems = [sites.system(f"p{i}", range(79), time_base_group="g", fading="none") for i in range(6)]
    sim = _agree(sites.site(systems), 200_000, seed=5)
    lo, hi = sim.systems[0].collision.interval(Z999)
    assert lo <= 1 - (1 - 1 / 79) ** 5 <= hi


def test_simulation_is_deterministic_for_a_seed():
    body = copy.deepcopy(samples.load("container_terminal")["site"])
    prep = prepare_site(sites.load(body))
    a = simulate_site(prep, 20_000, seed=3)
    b = simulate_site(prep, 20_000, seed=3)
    c = simulate_site(prep, 20_000, seed=4)
    assert a == b
    assert a != c


def test_simulation_detects_a_wrong_model():
    # Not vacuous: a 10 % error in a per-hop rate falls outside the interval at this sample size.
    systems = [sites.system(f"s{i}", range(79), dwell_s=0.01, packet_airtime_s=0.004) for i in range(5)]
    prep = prepare_site(sites.load(sites.site(systems)))
    true = assess_site(prep).systems[0].collision_probability
    lo, hi = simulate_site(prep, 200_000, seed=1).systems[0].collision.interval(Z999)
    assert not (lo <= 1.1 * true <= hi)


def test_wilson_interval():
    # Wilson score interval, e.g. Agresti and Coull (1998): 10 of 100 at 95 % is [0.0552, 0.1744].
    lo, hi = SimulatedRate(10, 100).interval()
    assert lo == pytest.approx(0.0552, abs=5e-4)
    assert hi == pytest.approx(0.1744, abs=5e-4)
