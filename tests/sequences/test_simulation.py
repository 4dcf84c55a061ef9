"""Sequence-driven Monte Carlo: retry accounting, fading correlation, agreement with the analytic model."""

import math

import numpy as np
import pytest

from cohop import samples
from cohop.assess import assess_site
from cohop.prepare import prepare_site
from cohop.sequences import simulate
from cohop.stats import hopping as theory
from cohop.sequences.construct import build_sequences
from tests import sites


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


@pytest.mark.parametrize("name", ["water_works", "open_pit_mine"])
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


def test_a_long_packet_against_short_dwells_counts_hundreds_of_overlaps():
    # v's 60 ms packet overlaps (T_v + T_a) / D_a = 601 of a's 0.1 ms dwells (cohop.stats.overlap), every one
    # on a channel inside v's window (0 dB coupling: harmful at any offset), each active with 0.3 %. A hop is
    # hit unless all are quiet: 1 - 0.997^601 = 0.836. A count kept in 8 bits wraps at 128 (601 -> 89:
    # 0.234); the analytic assessment computes the same figure from the overlap count.
    none = {"model": "none"}
    body = sites.site([sites.system("v", range(10), dwell_s=0.1, packet_airtime_s=0.06, retry_limit=0, fading=none),
                       sites.system("a", range(10), dwell_s=1e-4, packet_airtime_s=1e-4, activity_fraction=0.003,
                                    fading=none)], coupling_loss_db=0.0, n_channels=10)
    prep = prepare_site(sites.load(body))
    assert prep.window[0, 1] >= 9 and prep.overlap_k0[0, 1] == 601
    expected = 1 - 0.997**601
    analytic = assess_site(prep).systems[0].attempt_loss_probability
    assert analytic == pytest.approx(expected, rel=1e-6)
    sim = simulate.simulate_retries(prep, [np.arange(10), np.arange(10)], 0, 20_000, 3, 100e-9)
    assert sim.attempt_loss == pytest.approx(expected, abs=5 * math.sqrt(expected * (1 - expected) / 20_000))


def _plain_count(seq_a, lo, hi, chan_v, width):
    return np.array([sum(abs(int(seq_a[m % seq_a.size]) - int(c)) <= width for m in range(a, b + 1))
                     for a, b, c in zip(lo, hi, chan_v)])


def test_dwell_counts_both_ways_match_a_plain_loop():
    # a's dwells m in [lo, hi] whose channel lies within the window of v's: dwell by dwell (short runs) and from
    # running totals along a's period (long runs), against counting them one by one.
    rng = np.random.default_rng(8)
    seq_a = rng.integers(0, 30, 23)
    prep = prepare_site(sites.load(sites.site([sites.system("a", range(30))], coupling_loss_db=None, n_channels=30)))
    orders = simulate.Orders.of(prep, [seq_a])
    lo = rng.integers(-100, 100, 500)
    chan_v = rng.integers(0, 30, 500)
    short = lo + rng.integers(-1, simulate._DRAWN_DWELLS + 1, 500)
    expected = _plain_count(seq_a, lo, short, chan_v, 2)
    drawn = simulate._counts_drawn(orders, np.zeros(500, dtype=int), chan_v, lo, short, np.full(500, 2))
    assert drawn.tolist() == expected.tolist()
    assert simulate._counts_from_totals(seq_a, chan_v, lo, short, 2).tolist() == expected.tolist()
    long = lo + rng.integers(0, 200, 500)
    assert simulate._counts_from_totals(seq_a, chan_v, lo, long, 2).tolist() == \
        _plain_count(seq_a, lo, long, chan_v, 2).tolist()


def test_fading_none_reproduces_the_threshold_simulation():
    # the same draws as the threshold code (tests.sequences.threshold: its figures for this site and seed), bit
    # for bit: with one band of harm 1 the counts, the survival (1 - alpha)^count and the interferers' draws
    # against alpha are the old ones
    from cohop.sequences.analysis import analyse
    from cohop.sequences.construct import Sequence
    from tests.sequences import threshold

    prep, orders = threshold.scenario()
    seqs = [Sequence(system=v, channels=q, construction="given", component=-1) for v, q in enumerate(orders)]
    reach = analyse(prep, seqs, 100e-9).reach
    got = [(f.attempt_loss, f.residual_loss) for f in simulate.simulate_all(prep, orders, 4000, 7, 100e-9, reach)]
    assert got == threshold.SIMULATED


def test_soft_harm_simulated_per_transmission_matches_the_exact_per_hop_figure():
    # A Rayleigh-faded victim (60 dB margin: fades 1e-6 per hop, negligible), one attempt of one hop. Sources:
    # - neighbour a, 23 dB over v's threshold co-channel (rho about 1 out to 1 MHz, 0.016 at 2 MHz, 0.0016
    #   beyond: harm at every offset), T_v + T_a = 6 ms < D_a: K = 0 or 1 overlapped dwell, P(K = 1) = 0.6
    #   (cohop.stats.overlap), the dwell uniform over a's order: x_a(c) = 0.6 alpha_a mean_j rho(|c - y_j|);
    # - a continuous interferer: alpha_w rho_w(c) per hop;
    # - a bursty one (3 ms bursts every 5 ms: K = 1 or 2 with P(2) = 0.4): 1 - E_K[(1 - alpha_r rho_r(c))^K];
    # rho read from the kernel (cohop.harm), fractional on most channels. Sources independent: the hop survives
    # all of them (cohop.physics.capture: the product is exact for a Rayleigh-faded wanted signal).
    from cohop import harm
    from cohop.stats.overlap import random_phase_overlap

    systems = [sites.system("v", range(0, 20), dwell_s=0.01, packet_airtime_s=0.004, retry_limit=0,
                            fade_margin_db=60.0),
               sites.system("a", range(5, 30), dwell_s=0.01, packet_airtime_s=0.002, activity_fraction=0.7)]
    itf = [{"id": "wall", "low_hz": 2404.5e6, "high_hz": 2406.5e6, "activity_fraction": 0.5,
            "levels": [{"system": "v", "level_dbm": -70.0}]},
           {"id": "radar", "low_hz": 2412.5e6, "high_hz": 2413.5e6, "activity_fraction": 0.8, "burst_s": 0.003,
            "period_s": 0.005, "levels": [{"system": "v", "level_dbm": -67.0}]}]
    prep = prepare_site(sites.load(sites.site(systems, coupling_loss_db=48.0, interferers=itf, n_channels=30)))
    rng = np.random.default_rng(2)
    x, y = rng.permutation(20), rng.permutation(np.arange(5, 30))
    rho_a = prep.harm.system_harm(0, np.abs(x[:, None] - y[None, :]))[1]  # (x, y)
    assert ((rho_a > 0.01) & (rho_a < 0.99)).any() and prep.window[0, 1] == 1  # soft beyond the window
    overlap = random_phase_overlap(0.004, 0.002, 0.01)
    x_a = overlap.r * 0.7 * rho_a.mean(axis=1)
    spans = np.array([[i.low_hz, i.high_hz] for i in prep.site.interferers])
    rho_w, rho_r = harm.interferer_harm(prep.harm, prep.site.systems[0], 0, spans, prep.centres_hz, x)
    assert ((rho_w > 0) & (rho_w < 0.5)).any() and ((rho_r > 0.1) & (rho_r < 0.95)).any()
    burst = random_phase_overlap(0.004, 0.003, 0.005)
    keep_r = sum(p * (1 - 0.8 * rho_r) ** k for k, p in burst.probabilities().items())
    fade = float(prep.fade_probability[0])
    per_hop = 1 - (1 - fade) * (1 - x_a) * (1 - 0.5 * rho_w) * keep_r
    want = per_hop.mean()  # v's packet starts on a uniform position of its order
    packets = 60_000
    sim = simulate.simulate_retries(prep, [x, y], 0, packets, 9, 100e-9)
    sd = math.sqrt(want * (1 - want) / packets)
    assert abs(sim.attempt_loss - want) < 5 * sd, (sim.attempt_loss, want, sd)
    # the check can tell: harm 1 wherever there is some (the window's hard form, stretched) is many sd away
    hard = 1 - (1 - fade) * (1 - overlap.r * 0.7 * (rho_a > 0).mean(axis=1)) * (1 - 0.5 * (rho_w > 0)) * sum(
        p * (1 - 0.8 * (rho_r > 0)) ** k for k, p in burst.probabilities().items())
    assert abs(sim.attempt_loss - hard.mean()) > 20 * sd
