"""cohop.traffic.figures along real orders: hand-computed deterministic cases, the independent limit through
the whole pipeline (Feller), rare events computed rather than simulated, and agreement with the
sequence-driven simulation (cohop.sequences.simulate) where the rate is high enough to simulate."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from cohop.assess import resolve_hop_sets
from cohop.prepare import prepare_site
from cohop.sequences.construct import build_sequences
from cohop.sequences.report import delay_spread
from cohop.sequences.simulate import simulate_retries
from cohop.site import Traffic
from cohop.traffic import latency
from cohop.traffic.figures import system_traffic
from cohop.traffic.pieces import channel_losses
from tests import sites

ORDER = [3, 7, 1, 9, 5, 0, 8, 2, 6, 4]


def _prepared(systems, traffic: Traffic, interferers=None, **site_kw):
    site = sites.load(sites.site(systems, interferers=interferers, n_channels=12, **site_kw))
    systems = tuple(dataclasses.replace(s, traffic=traffic) if i == 0 else s for i, s in enumerate(site.systems))
    return prepare_site(dataclasses.replace(site, systems=systems))


def _wall(activity: float = 1.0) -> dict:
    """A continuous interferer over 2403.5-2405.5 MHz heard strongly at A."""
    return {"id": "wall", "low_hz": 2403.5e6, "high_hz": 2405.5e6, "activity_fraction": activity,
            "levels": [{"system": "A", "level_dbm": -45.0}]}


def test_deterministic_interferer_along_the_order_by_hand():
    # no fading, one interferer always on: a hop is lost iff its channel is in the harmed set; delivery at
    # attempt k happens iff hops s..s+k-2 are harmed and s+k-1 is not, averaged over every start s
    traffic = Traffic(message_interval_s=0.004, deadline_s=0.0015, deadline_probability=0.9)
    prep = _prepared([sites.system("A", sequence=ORDER, fading={"model": "none"})], traffic, [_wall()])
    sets, _ = resolve_hop_sets(prep)
    harmed = channel_losses(prep, sets, 0).interferers[0] > 0
    assert 0 < harmed.sum() < len(ORDER)  # the case is not trivial
    lost = {c: bool(h) for c, h in zip(sets[0], harmed)}
    attempts = 4
    want = np.zeros(attempts)
    for s in range(len(ORDER)):
        for k in range(attempts):
            if all(lost[ORDER[(s + j) % 10]] for j in range(k)) and not lost[ORDER[(s + k) % 10]]:
                want[k] += 1 / len(ORDER)
    fig = system_traffic(prep, sets, [np.array(ORDER)], 0, "request")
    assert fig.exact and fig.undelivered.interval == (fig.undelivered.value, fig.undelivered.value)
    assert fig.delivered_at_attempt == pytest.approx(want, abs=1e-12)
    assert fig.deadline.dominant_source == "wall"


def test_neighbour_without_order_is_the_independent_limit():
    # a neighbour whose order is unknown hits independently per hop with the assessment's per-channel figure
    # x(c); without fading, every attempt lost has probability mean over starts of prod_k x(o(s + k))
    traffic = Traffic(message_interval_s=0.004)
    prep = _prepared([sites.system("A", sequence=ORDER, fading={"model": "none"}),
                      sites.system("B", hop_set=range(12), activity_fraction=0.7)], traffic)
    sets, _ = resolve_hop_sets(prep)
    x = channel_losses(prep, sets, 0).systems[1]
    per_channel = dict(zip(sets[0], x))
    want = np.mean([np.prod([per_channel[ORDER[(s + k) % 10]] for k in range(4)]) for s in range(10)])
    fig = system_traffic(prep, sets, [np.array(ORDER), None], 0, "request")
    assert fig.exact
    assert fig.undelivered.value == pytest.approx(want, rel=1e-12)
    assert fig.undelivered.value > 0


def test_rare_stops_are_computed_and_match_feller():
    # one attempt per message and messages 100 dwells apart (beyond GAP_HOPS, so their fades are taken as
    # independent): messages are independent trials lost with the fade probability f, and runs reaching m
    # per message are (1 - f) f^m (Feller's independent limit, [der] in cohop.stats.runs); far below anything
    # a simulation could count, and never shown as 0
    traffic = Traffic(message_interval_s=0.0625, watchdog_s=0.3125, max_stops_per_hour=1e-3)
    prep = _prepared([sites.system("A", sequence=ORDER, fade_margin_db=25.0, retry_limit=0)], traffic)
    sets, _ = resolve_hop_sets(prep)
    fig = system_traffic(prep, sets, [np.array(ORDER)], 0, "request")
    f = float(prep.fade_probability[0])
    m = fig.watchdog_messages
    assert m == 5 and fig.message_interval_s == pytest.approx(0.0625, rel=1e-9)
    want = (1 - f) * f**m * 3600 / fig.message_interval_s
    assert fig.exact and 0 < fig.stops_per_hour.value * fig.message_interval_s / 3600 < 1e-12  # per message
    assert fig.stops_per_hour.value == pytest.approx(want, rel=1e-9)
    assert fig.meets_stops is True
    assert fig.stops_per_hour.dominant_source == "fading"


def test_figures_recompute_from_their_parts():
    traffic = Traffic(message_interval_s=0.004, deadline_s=0.0021, deadline_probability=0.999, watchdog_s=0.012)
    # B dwells twice as long as A: its phases are sampled (stratified), not enumerated
    prep = _prepared([sites.system("A", sequence=ORDER),
                      sites.system("B", hop_set=range(0, 8), dwell_s=1.25e-3, packet_airtime_s=1e-3)], traffic)
    sets, _ = resolve_hop_sets(prep)
    orders = [np.array(ORDER), build_sequences(prep, sets)[0][1].channels]
    fig = system_traffic(prep, sets, orders, 0, "request")
    assert not fig.exact and fig.phase_samples == 64
    cdf = latency.cdf(traffic.deadline_s, fig.delivered_at_attempt, fig.attempt_latency_s, fig.dwell_s)
    assert fig.deadline.value == pytest.approx(float(cdf), rel=1e-12)
    assert fig.deadline.interval[0] <= fig.deadline.value <= fig.deadline.interval[1]
    assert fig.deadline_missed.value == pytest.approx(1 - fig.deadline.value, abs=1e-15)
    assert fig.meets_deadline == (fig.deadline_missed.interval[1] <= 1 - traffic.deadline_probability)
    assert fig.stops_per_hour.value * fig.message_interval_s / 3600 == pytest.approx(
        fig.lost_message_runs_per_hour[fig.watchdog_messages - 1] * fig.message_interval_s / 3600, rel=1e-12)
    assert fig.undelivered.value == pytest.approx(1 - sum(fig.delivered_at_attempt), abs=1e-12)
    assert fig.undelivered.value == pytest.approx(fig.lost_attempt_runs[-1], rel=1e-9)
    for q in fig.latency_quantiles:
        if q.latency_s is not None:
            assert float(latency.cdf(q.latency_s, fig.delivered_at_attempt, fig.attempt_latency_s,
                                     fig.dwell_s)) == pytest.approx(q.level, rel=1e-9)
    assert "safety assessment" in fig.caution


def test_agrees_with_the_sequence_driven_simulation():
    # a rate high enough to simulate: two networks on one hop set, correlated Rayleigh fading on 1 MHz steps;
    # the simulation draws a random phase per packet and AR(1) complex gains, this model averages exact
    # figures over stratified phases with Kibble's joint fades. Their intervals must overlap.
    traffic = Traffic(message_interval_s=0.01)
    a = sites.system("A", hop_set=range(11), fade_margin_db=8.0, retry_limit=1, packet_airtime_s=400e-6)
    b = sites.system("B", hop_set=range(11), activity_fraction=0.5, packet_airtime_s=500e-6)
    prep = _prepared([a, b], traffic)
    sets, _ = resolve_hop_sets(prep)
    orders = [s.channels for s in build_sequences(prep, sets)[0]]
    fig = system_traffic(prep, sets, orders, 0, "planned", samples=128)
    sim = simulate_retries(prep, orders, 0, 40_000, seed=5, rms_delay_spread_s=delay_spread(prep))
    assert 0.01 < sim.residual_loss < 0.5  # high enough to simulate
    lo = min(fig.undelivered.interval[0], fig.undelivered.value)
    hi = max(fig.undelivered.interval[1], fig.undelivered.value)
    assert lo <= sim.residual_interval[1] and sim.residual_interval[0] <= hi, (fig.undelivered, sim)


def test_dominant_source_is_the_one_whose_removal_helps_most():
    # two neighbours without known orders (independent per hop): B at 40 dB coupling hits far more hops of
    # A than C at 68 dB; no fading. Removing B lowers every figure most, so B dominates each.
    traffic = Traffic(message_interval_s=0.004, deadline_s=0.0015, deadline_probability=0.99, watchdog_s=0.008)
    systems = [sites.system("A", sequence=ORDER, fading={"model": "none"}, retry_limit=1),
               sites.system("B", hop_set=range(12)), sites.system("C", hop_set=range(12))]
    body = sites.site(systems, coupling_loss_db=None, n_channels=12)
    body["coupling"] = {"entries": [{"from_system": "A", "to_system": "B", "loss_db": 40.0},
                                    {"from_system": "A", "to_system": "C", "loss_db": 68.0},
                                    {"from_system": "B", "to_system": "C", "loss_db": 60.0}]}
    site = sites.load(body)
    site = dataclasses.replace(site, systems=(dataclasses.replace(site.systems[0], traffic=traffic),)
                               + site.systems[1:])
    prep = prepare_site(site)
    sets, _ = resolve_hop_sets(prep)
    losses = channel_losses(prep, sets, 0)
    assert losses.systems[1].mean() > losses.systems[2].mean() > 0  # both hit, B more
    fig = system_traffic(prep, sets, [np.array(ORDER), None, None], 0, "request")
    assert fig.undelivered.dominant_source == "B"
    assert fig.deadline.dominant_source == "B"
    assert fig.stops_per_hour.dominant_source == "B"


def test_enumerated_phases_agree_with_many_stratified_samples(monkeypatch):
    # one neighbour with A's dwell: its phase classes (dwell offset x stretch of the fraction between the
    # overlap breakpoints 1 - T_b / D = 0.52 and T_a / D = 0.64) are enumerated with their weights (exact);
    # 4096 stratified samples of the continuous phase (the same model, sampled) must bracket each figure
    from cohop.traffic import figures

    traffic = Traffic(message_interval_s=0.0025, deadline_s=0.0012, watchdog_s=0.005)
    prep = _prepared([sites.system("A", sequence=ORDER, retry_limit=1, packet_airtime_s=400e-6),
                      sites.system("B", hop_set=range(0, 8), packet_airtime_s=300e-6)], traffic)
    sets, _ = resolve_hop_sets(prep)
    orders = [np.array(ORDER), build_sequences(prep, sets)[0][1].channels]
    exact = system_traffic(prep, sets, orders, 0, "request")
    assert exact.exact and exact.phase_samples == 2 * orders[1].size * 3  # gcd(10, 4) starts x offsets x stretches
    monkeypatch.setattr(figures, "MAX_LATTICE", 0)
    sampled = system_traffic(prep, sets, orders, 0, "request", samples=4096)
    assert not sampled.exact
    for name in ("undelivered", "deadline", "stops_per_hour"):
        e, s = getattr(exact, name), getattr(sampled, name)
        assert s.interval[0] <= e.value <= s.interval[1], (name, e, s)
    assert exact.undelivered.value > 1e-4  # a figure the comparison can see


def _overlapping_dwells(t, phase, dwell_v, airtime_v, dwell_a, airtime_a):
    """Definition (cohop.traffic.hits): a's dwells m, [m D_a + phi, m D_a + phi + T_a), that overlap v's packet on
    its hop t, [t D_v, t D_v + T_v), found by checking a generous range of m one by one."""
    centre = int(np.floor((t * dwell_v - phase) / dwell_a))
    return [m for m in range(centre - 4, centre + int(np.ceil(airtime_v / dwell_a)) + 5)
            if m * dwell_a + phase < t * dwell_v + airtime_v and m * dwell_a + phase + airtime_a > t * dwell_v]


def test_band_counts_and_survival_match_a_plain_loop_over_the_dwells():
    # Soft harm of fractional rho in three bands and a gap (a made-up row): the per-band counts and
    # prod_g (1 - alpha rho_g)^count_g against listing the overlapping dwells and multiplying their
    # (1 - alpha rho(offset)) one by one; unequal dwells and packets longer than a's dwell (several dwells).
    from cohop.sequences.bands import bands_of
    from cohop.traffic.hits import band_counts, dwell_counts, survival_given_phase

    rng = np.random.default_rng(6)
    order_v, order_a = rng.permutation(12), rng.integers(0, 12, 17)
    rho = np.array([0.9, 0.9, 0.35, 0.0, 0.05, 0.05, 0.05, 0, 0, 0, 0, 0])
    b = bands_of(rho[None])
    assert b.widths.tolist() == [[1, 2, 3, 6]]
    alpha, dv, tv, da, ta = 0.6, 1e-3, 0.9e-3, 0.4e-3, 0.3e-3
    hops = rng.integers(0, 1000, (5, 30))
    phase = rng.random(5) * order_a.size * da
    within = band_counts(order_v, order_a, b.widths[0], hops, phase, dv, tv, da, ta)
    got = survival_given_phase(within, b.hit([alpha])[0])
    assert within[-1].tolist() == dwell_counts(order_v, order_a, 6, hops, phase, dv, tv, da, ta).tolist()
    for j in range(5):
        for x in range(30):
            t = int(hops[j, x])
            dwells = _overlapping_dwells(t, phase[j], dv, tv, da, ta)
            offsets = [abs(int(order_a[m % order_a.size]) - int(order_v[t % order_v.size])) for m in dwells]
            for g, w in enumerate(b.widths[0]):
                assert within[g, j, x] == sum(o <= w for o in offsets)
            assert got[j, x] == pytest.approx(np.prod([1 - alpha * rho[o] for o in offsets]), rel=1e-12)


def test_enumerated_phases_with_soft_harm_match_walking_every_phase():
    # One neighbour B with A's dwell (so its phase classes are enumerated: exact), A Rayleigh-faded, one hop per
    # message: a message is lost unless the hop neither fades (f) nor is destroyed by B, whose dwells overlapping
    # the hop each transmit with alpha and destroy it with rho(offset), 5 dB over A's threshold co-channel:
    # rho = 0.958 co-channel, 0.222 at 1 MHz (cohop.physics.capture [2]). Definition walked directly: every
    # position of A's order against B's phase on a grid of 0.01 dwell (the overlap breakpoints 1 - T_b / D =
    # 0.52 and T_a / D = 0.64 are grid lines, so the grid average is exact): mean of 1 - (1 - f) prod (1 - alpha rho).
    traffic = Traffic(message_interval_s=0.004)
    order_b = np.array([5, 2, 7, 0, 3, 6, 1, 4])
    prep = _prepared([sites.system("A", sequence=ORDER, retry_limit=0, packet_airtime_s=400e-6),
                      sites.system("B", hop_set=range(0, 8), packet_airtime_s=300e-6, activity_fraction=0.6)],
                     traffic, coupling_loss_db=66.0)
    rho = prep.harm.system_harm(0, np.arange(12))[1]
    assert 0.9 < rho[0] < 1 and 0.1 < rho[1] < 0.5 and prep.window[0, 1] == 0  # soft beyond the window
    sets, _ = resolve_hop_sets(prep)
    fig = system_traffic(prep, sets, [np.array(ORDER), order_b], 0, "request")
    assert fig.exact
    f = float(prep.fade_probability[0])
    d = 625e-6
    lost = []
    for t in range(len(ORDER)):
        for i in range(order_b.size * 100):
            phase = (i + 0.5) * d / 100
            dwells = _overlapping_dwells(t, phase, d, 400e-6, d, 300e-6)
            keep = np.prod([1 - 0.6 * rho[abs(int(order_b[m % 8]) - ORDER[t])] for m in dwells])
            lost.append(1 - (1 - f) * keep)
    assert fig.undelivered.value == pytest.approx(np.mean(lost), rel=1e-9)


@pytest.mark.parametrize("known", [0, 1])
def test_fading_none_reproduces_the_threshold_traffic_figures(known):
    # tests.sequences.threshold: the threshold code's figures for this site (s0 along its order, neighbours
    # with and without a known order, a continuous and a bursty interferer), kept with fading "none"
    from tests.sequences import threshold

    prep, orders = threshold.scenario()
    site = prep.site
    site = dataclasses.replace(site, systems=(dataclasses.replace(site.systems[0], traffic=threshold.TRAFFIC),)
                               + site.systems[1:])
    prep = prepare_site(site)
    sets, _ = resolve_hop_sets(prep)
    given = [[orders[0], orders[1], orders[2], None], [orders[0], None, orders[2], orders[3]]][known]
    fig = system_traffic(prep, sets, given, 0, "request", samples=16, seed=3)
    undelivered, missed, stops, delivered = threshold.TRAFFIC_FIGURES[known]
    assert fig.undelivered.value == pytest.approx(undelivered, rel=1e-12)
    assert fig.deadline_missed.value == pytest.approx(missed, rel=1e-12)
    assert fig.stops_per_hour.value == pytest.approx(stops, rel=1e-12)
    assert fig.delivered_at_attempt == pytest.approx(delivered, rel=1e-12)
