"""Sequence-driven Monte Carlo: retry accounting, fading correlation, agreement with the analytic model."""

import math

import numpy as np
import pytest

from cohop import samples
from cohop.assess import assess_site
from cohop.prepare import prepare_site
from cohop.sequences import simulate, theory
from cohop.sequences.construct import build_sequences
from tests import sites


@pytest.mark.parametrize("p, rho, k", [(0.1, 0.0, 2), (0.1, 0.5, 2), (0.2, 0.3, 3), (0.05, 0.8, 1)])
def test_markov_losses_follow_the_gilbert_elliott_form(p, rho, k):
    # Domain reference section 5 [der]: with correlation rho between consecutive losses the residual after
    # k retries is p (p + rho (1 - p))^k; rho = 0 gives p^(k+1). 99.9 % Wilson interval.
    expected = p * (p + rho * (1 - p)) ** k
    value, (lo, hi) = simulate.markov_residual(p, rho, k, 400_000, seed=11)
    z = 3.29 / 1.96
    half = (hi - lo) / 2 * z
    assert abs(value - expected) <= half + 1e-12, (value, expected)


def test_simulated_fading_has_the_jakes_envelope_correlation():
    # Jakes: r = 1 / (1 + (2 pi df sigma)^2). The simulation sets the complex correlation to sqrt(r); the
    # envelope correlation of Rayleigh fading is close to the squared complex correlation (from memory),
    # within a few percent.
    body = sites.site([sites.system("v", range(10), fading={"model": "rayleigh"})], coupling_loss_db=None)
    prep = prepare_site(sites.load(body))
    rng = np.random.Generator(np.random.PCG64(1))
    sigma = 100e-9
    for step in (1, 2, 4):
        chans = np.tile(np.array([0, step]), (200_000, 1))
        df = step * prep.spacing_hz
        r = theory.envelope_correlation(df, sigma)
        rho = math.sqrt(r)
        g0 = (rng.standard_normal(200_000) + 1j * rng.standard_normal(200_000)) / math.sqrt(2)
        w = (rng.standard_normal(200_000) + 1j * rng.standard_normal(200_000)) / math.sqrt(2)
        g1 = rho * g0 + math.sqrt(1 - rho**2) * w
        measured = np.corrcoef(np.abs(g0), np.abs(g1))[0, 1]
        assert measured == pytest.approx(r, abs=0.03), (step, measured, r)
        fades = simulate._fades(rng, chans, prep, 0, sigma)
        assert fades.shape == chans.shape


@pytest.mark.parametrize("name", ["water_works_us915", "open_pit_mine_ca915"])
def test_sequence_driven_attempt_loss_agrees_with_the_analytic_model(name):
    # Real sequences with random offsets give the uniform model's per-attempt loss in expectation.
    prep = prepare_site(sites.load(samples.load(name)["site"]))
    hop_sets = [np.array(s.hop_set) for s in prep.site.systems]
    seqs, _ = build_sequences(prep, hop_sets, seed=3)
    analytic = assess_site(prep, hop_sets=hop_sets)
    for v, fig in enumerate(analytic.systems):
        sim = simulate.simulate_retries(prep, [s.channels for s in seqs], v, 60_000, 5, 100e-9)
        p = fig.attempt_loss_probability
        sd = math.sqrt(max(p * (1 - p), 1e-12) / sim.packets / (prep.site.systems[v].retry_limit + 1))
        assert abs(sim.attempt_loss - p) < 5 * sd + 1e-4, (fig.id, sim.attempt_loss, p)


def test_adjacent_consecutive_hops_cost_more_after_retries():
    # One system alone, Rayleigh fading with a 3 dB margin: retries on the next hop fade together when
    # consecutive hops are 1 MHz apart at 50 ns delay spread (Jakes: r = 0.91), hardly when about 20 MHz
    # apart (r = 0.025), where the residual approaches the independent-attempt figure p^(k+1).
    body = sites.site([sites.system("v", range(40), fade_margin_db=3.0, retry_limit=3)], coupling_loss_db=None,
                      n_channels=40)
    prep = prepare_site(sites.load(body))
    near = np.arange(40)
    far = np.array([(i * 20) % 39 for i in range(39)] + [39])
    a = simulate.simulate_retries(prep, [near], 0, 100_000, 1, 50e-9)
    b = simulate.simulate_retries(prep, [far], 0, 100_000, 1, 50e-9)
    assert a.attempt_loss == pytest.approx(b.attempt_loss, rel=0.05)
    assert a.residual_loss > 3 * b.residual_loss
    assert b.residual_loss == pytest.approx(b.independent_residual, rel=0.25)


def test_common_pattern_keeps_each_hop_set_and_shares_ranks():
    from cohop.sequences.report import common_pattern

    a, b, c = np.array([10, 2, 6, 0]), np.array([1, 3, 5, 7]), np.array([9, 4, 8])
    pa, pb, pc = common_pattern([a, b, c])
    assert pa.tolist() == a.tolist()  # the first of its length keeps its order
    assert sorted(pb.tolist()) == sorted(b.tolist()) and pb.tolist() == [7, 3, 5, 1]  # a's ranks 3, 1, 2, 0
    assert pc.tolist() == c.tolist()  # no earlier order of length 3


def test_neighbours_moving_in_step_cost_more_after_retries():
    # Two systems on interleaved channels (even / odd), each harmed by the other's adjacent channel, equal
    # dwells, unsynchronised. With their own orders a hit on one hop says little about the next; when both
    # follow one rank pattern, a time offset that puts them side by side keeps them side by side, so whole
    # packets are lost together: the per-hop rate is alike, the residual after retries is much higher.
    from cohop.sequences.report import common_pattern

    rejection = [{"offset_hz": 1e6, "rejection_db": 5.0}, {"offset_hz": 2e6, "rejection_db": 60.0}]
    common = dict(activity_fraction=1.0, retry_limit=2, fade_margin_db=40.0, rejection=rejection)
    body = sites.site([sites.system("a", range(0, 40, 2), **common), sites.system("b", range(1, 40, 2), **common)],
                      coupling_loss_db=60.0, n_channels=40)
    prep = prepare_site(sites.load(body))
    assert prep.window[0, 1] >= 1 and prep.window[1, 0] >= 1
    seqs, _ = build_sequences(prep, [np.arange(0, 40, 2), np.arange(1, 40, 2)], seed=2)
    own = [s.channels for s in seqs]
    stepped = common_pattern(own)
    mine = simulate.simulate_retries(prep, own, 0, 100_000, 4, 100e-9)
    in_step = simulate.simulate_retries(prep, stepped, 0, 100_000, 4, 100e-9)
    assert in_step.attempt_loss == pytest.approx(mine.attempt_loss, rel=0.35)
    assert in_step.residual_loss > 3 * mine.residual_loss, (in_step, mine)
