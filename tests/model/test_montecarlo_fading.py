"""The Monte Carlo draws fading-aware capture itself: published closed forms, and agreement with the evaluator.

Checks, each against an outside source:
- Rayleigh-faded wanted signal and steady interferers: a hop survives with exp(-m) prod_j exp(-x_j)
  (Kahlon, Szyszkowicz, Periyalwar, Yanikomeroglu, IEEE Wireless Commun. Lett. 1(5), 2012); with
  Rayleigh-faded interference links exp(-m) prod_j 1 / (1 + x_j) (Linnartz, "Narrowband Land-Mobile Radio
  Networks", Artech House 1993). m = 10^(-M / 10), x_j = 10^(E_j / 10) with E_j the excess over the capture
  threshold after the victim's rejection at the transmission's offset.
- Rician-faded wanted signal of K-factor K: 2 (K + 1) s ~ ncx2(2, 2K) (Goldsmith, "Wireless Communications",
  ch. 3; scipy.stats.ncx2), so a hop with one steady interferer is lost with ncx2.cdf(2 (K + 1)(m + x), 2, 2K).
- fading "none": the threshold model, a hop lost iff an active transmission has E > 0.
- the evaluator (`cohop.assess`) on generated sites, within the simulation's interval for every system and
  source, Rician victims included: their several transmissions are combined jointly (`cohop.joint`); with
  several steady transmissions on one channel the joint figure is ncx2 at their summed power (Goldsmith),
  which the former product over transmissions understated (`test_rician_several_transmissions_are_joint`).

Intervals are 99.9 % Wilson intervals (per-source figures 99.999 %, many per site); seeds are fixed.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate
from scipy.stats import ncx2

from cohop.assess import assess_site
from cohop.montecarlo import simulate_site
from cohop.prepare import prepare_site
from tests import sites

Z999 = 3.2905
Z_SOURCES = 4.417

NONE = {"model": "none"}


def _ratio(db: float) -> float:
    return 10.0 ** (db / 10.0)


def _co_channel(fading, excess_db: float, margin_db: float = 10.0, activity: float = 1.0,
                extra_sources=()):
    """Victim 'v' on channel 5 alone; source 'a' always overlapping one dwell (slot-aligned), on channel 5 alone,
    at excess `excess_db` over v's capture threshold (v: -60 dBm wanted, SIR 11 dB; a: 0 dBm through
    71 - E dB). `extra_sources`: (id, channel, excess) of further aligned sources."""
    victim = sites.system("v", [5], fading=fading, fade_margin_db=margin_db, time_base_group="g")
    others = [("a", 5, excess_db)] + list(extra_sources)
    systems = [victim] + [sites.system(sid, [ch], fading=NONE, activity_fraction=activity, time_base_group="g")
                          for sid, ch, _ in others]
    entries = [{"from_system": sid, "to_system": "v", "loss_db": 71.0 - e} for sid, _, e in others]
    entries += [{"from_system": "v", "to_system": sid, "loss_db": 200.0} for sid, _, _ in others]
    ids = [sid for sid, _, _ in others]
    entries += [{"from_system": p, "to_system": q, "loss_db": 200.0} for p in ids for q in ids if p != q]
    body = sites.site(systems, coupling_loss_db=None, n_channels=20)
    body["coupling"] = {"entries": entries}
    prep = prepare_site(sites.load(body))
    for a, (_, _, e) in enumerate(others, start=1):
        assert prep.links[0][a].excess_db == pytest.approx(e, abs=1e-9)
    return prep


def _within(rate, value: float, z: float = Z999):
    lo, hi = rate.interval(z)
    assert lo <= value <= hi, (value, rate.probability, lo, hi)


@pytest.mark.parametrize("excess_db", [-6.0, 0.0, 6.0])
def test_rayleigh_with_a_steady_interferer(excess_db):
    # Kahlon et al. 2012: P(lost) = 1 - exp(-m) exp(-x); among hops the noise lets through 1 - exp(-x)
    prep = _co_channel("rayleigh", excess_db)
    m, x = _ratio(-10.0), _ratio(excess_db)
    sim = simulate_site(prep, 200_000, seed=1).systems[0]
    _within(sim.hop_loss, 1.0 - math.exp(-m) * math.exp(-x))
    _within(sim.collision, -math.expm1(-x))
    _within(sim.by_source["a"], -math.expm1(-x))


@pytest.mark.parametrize("excess_db", [-6.0, 0.0, 6.0])
def test_rayleigh_with_a_rayleigh_faded_interferer(excess_db):
    # Linnartz 1993: P(lost) = 1 - exp(-m) / (1 + x); among hops the noise lets through x / (1 + x)
    prep = _co_channel({"model": "rayleigh", "interference": "rayleigh"}, excess_db)
    m, x = _ratio(-10.0), _ratio(excess_db)
    sim = simulate_site(prep, 200_000, seed=2).systems[0]
    _within(sim.hop_loss, 1.0 - math.exp(-m) / (1.0 + x))
    _within(sim.collision, x / (1.0 + x))


def test_rayleigh_powers_add_across_sources_and_offsets():
    # Kahlon et al. 2012, several interferers: exp(-m) prod_j exp(-x_j). Source b is one channel off: the
    # victim's rejection there (11 dB, tests/sites.py) lowers its excess from 8 dB to -3 dB.
    prep = _co_channel("rayleigh", 0.0, extra_sources=[("b", 6, 8.0), ("c", 5, -4.0)])
    m = _ratio(-10.0)
    xs = [_ratio(0.0), _ratio(8.0 - 11.0), _ratio(-4.0)]
    sim = simulate_site(prep, 300_000, seed=3).systems[0]
    _within(sim.hop_loss, 1.0 - math.exp(-m - sum(xs)))
    _within(sim.collision, -math.expm1(-sum(xs)))
    for sid, x in zip("abc", xs):
        _within(sim.by_source[sid], -math.expm1(-x), Z_SOURCES)


def _rician_survival(k: float, t: float) -> float:
    """P(s > t) for unit-mean Rician power of K-factor k (Goldsmith ch. 3; scipy.stats.ncx2)."""
    return float(ncx2.sf(2.0 * (k + 1.0) * t, 2, 2.0 * k))


@pytest.mark.parametrize("k_db, excess_db", [(3.0, -6.0), (3.0, 0.0), (9.0, -3.0), (9.0, 3.0)])
def test_rician_with_a_steady_interferer(k_db, excess_db):
    # P(lost) = P(s <= m + x) = ncx2.cdf(2 (K + 1)(m + x), 2, 2K)
    prep = _co_channel({"model": "rician", "k_factor_db": k_db}, excess_db)
    k, m, x = _ratio(k_db), _ratio(-10.0), _ratio(excess_db)
    sim = simulate_site(prep, 200_000, seed=4).systems[0]
    _within(sim.hop_loss, float(ncx2.cdf(2.0 * (k + 1.0) * (m + x), 2, 2.0 * k)))
    _within(sim.collision, 1.0 - _rician_survival(k, m + x) / _rician_survival(k, m))


def test_rician_with_a_rayleigh_faded_interferer():
    # E over g ~ Exp(1) of P(s <= m + g x), integrated numerically (scipy.integrate.quad)
    k_db, excess_db = 6.0, -2.0
    prep = _co_channel({"model": "rician", "k_factor_db": k_db, "interference": "rayleigh"}, excess_db)
    k, m, x = _ratio(k_db), _ratio(-10.0), _ratio(excess_db)
    kept, _ = integrate.quad(lambda g: math.exp(-g) * _rician_survival(k, m + g * x), 0.0, math.inf)
    sim = simulate_site(prep, 200_000, seed=5).systems[0]
    _within(sim.hop_loss, 1.0 - kept)
    _within(sim.collision, 1.0 - kept / _rician_survival(k, m))


@pytest.mark.parametrize("k_db, margin_db", [(3.0, 0.0), (10.0, -3.0)])
def test_rician_collision_counts_only_hops_the_noise_lets_through(k_db, margin_db):
    # Small and negative margins: most first draws fade (about 0.5 and 0.99 here); the collision figure is still
    # P(s <= m + x | s > m) over every trial, and the hop loss P(s <= m + x)
    prep = _co_channel({"model": "rician", "k_factor_db": k_db}, -3.0, margin_db=margin_db)
    k, m, x = _ratio(k_db), _ratio(-margin_db), _ratio(-3.0)
    sim = simulate_site(prep, 100_000, seed=6).systems[0]
    assert sim.collision.trials == sim.hop_loss.trials >= 100_000
    _within(sim.collision, 1.0 - _rician_survival(k, m + x) / _rician_survival(k, m))
    _within(sim.hop_loss, 1.0 - _rician_survival(k, m + x))


def test_rician_far_below_the_noise():
    # K = 10 dB, margin -20 dB: P(s > m) underflows in double precision. Every hop fades; given s > m, the excess
    # of s over m vanishes that far in the tail, so any interference destroys the hop (the evaluator's figure too)
    prep = _co_channel({"model": "rician", "k_factor_db": 10.0}, -3.0, margin_db=-20.0)
    assert _rician_survival(_ratio(10.0), _ratio(20.0)) == 0.0
    sim = simulate_site(prep, 10_000, seed=6).systems[0]
    assert sim.hop_loss.hits == sim.hop_loss.trials and sim.collision.hits == sim.collision.trials
    assert assess_site(prep).systems[0].collision_probability == 1.0


@pytest.mark.parametrize("excess_db, want", [(0.5, 0.6), (-0.5, 0.0)])
def test_fading_none_is_the_threshold(excess_db, want):
    # each transmission judged alone on its median level: lost iff E > 0, here with activity 0.6
    prep = _co_channel(NONE, excess_db, activity=0.6)
    sim = simulate_site(prep, 100_000, seed=7).systems[0]
    assert sim.hop_loss == sim.collision
    if want == 0.0:
        assert sim.collision.hits == 0
    else:
        _within(sim.collision, want)


def test_distinct_dwells_add_their_powers_at_their_offsets():
    """Two overlapped dwells (T_v + T_a = 2 D exactly) of a source hopping over channels 4, 5, 6, the victim on 5:
    the dwells take two distinct channels, each pair with probability 1/3, and their powers add (Kahlon et al.
    2012): survival given the noise lets the hop through is the mean over pairs of exp(-(x_i + x_j)), x at
    offset 0 and at 1 MHz (rejection 11 dB)."""
    victim = sites.system("v", [5], dwell_s=0.02, packet_airtime_s=0.015, fading="rayleigh", fade_margin_db=15.0)
    source = sites.system("a", [4, 5, 6], dwell_s=0.01, packet_airtime_s=0.005, fading=NONE)
    prep = prepare_site(sites.load(sites.site([victim, source], coupling_loss_db=60.0, n_channels=20)))
    link = prep.links[0][1]
    assert (link.overlap.k0, link.overlap.r) == (2, 0.0)
    x = {4: _ratio(link.excess_db - 11.0), 5: _ratio(link.excess_db), 6: _ratio(link.excess_db - 11.0)}
    pairs = [(4, 5), (4, 6), (5, 6)]
    survive = sum(math.exp(-(x[i] + x[j])) for i, j in pairs) / 3.0
    independent = sum(math.exp(-(x[i] + x[j])) for i in x for j in x) / 9.0  # with replacement: not the model
    sim = simulate_site(prep, 300_000, seed=8).systems[0]
    _within(sim.collision, 1.0 - survive)
    lo, hi = sim.collision.interval(Z999)
    assert not lo <= 1.0 - independent <= hi


def test_seeds_reproduce_every_figure():
    prep = _co_channel({"model": "rician", "k_factor_db": 3.0, "interference": "rayleigh"}, 0.0,
                       extra_sources=[("b", 6, 8.0)])
    a, b, c = (simulate_site(prep, 20_000, seed=s) for s in (3, 3, 4))
    assert a == b and a != c


def test_large_hop_sets_look_power_up_by_offset(monkeypatch):
    # beyond montecarlo._TABLE_ENTRIES the power is looked up by offset per transmission: the same figures
    from cohop import montecarlo

    prep = prepare_site(sites.load(generated_site(1)))
    table = simulate_site(prep, 5_000, seed=2)
    monkeypatch.setattr(montecarlo, "_TABLE_ENTRIES", 0)
    assert simulate_site(prep, 5_000, seed=2) == table


# --- agreement with the evaluator on generated sites ----------------------------------------------

#: Every capture model: the threshold, Rayleigh with steady or faded interference (twice as likely: the evaluator is
#: exact there), Rician with steady or faded interference.
FADINGS = [NONE, {"model": "rayleigh"}, {"model": "rayleigh", "interference": "rayleigh"}, {"model": "rayleigh"},
           {"model": "rayleigh", "interference": "rayleigh"}, {"model": "rician", "k_factor_db": 0.0},
           {"model": "rician", "k_factor_db": 7.0}, {"model": "rician", "k_factor_db": 12.0, "interference": "rayleigh"}]
N_CHANNELS = 40
#: Hop sets keep inside this range, so a 4 MHz wide system fits the band at every channel.
FIRST, LAST = 2, 37


def generated_site(seed: int, fadings=FADINGS) -> dict:
    """A seeded site with long packets against short dwells (up to ~145 overlapped dwells), low activity,
    asymmetric coupling, sources wider than their victims, a continuous and two bursty interferers (one with
    ~45 bursts in a long packet), and every fading model."""
    rng = np.random.default_rng(seed)
    n = int(rng.integers(3, 6))
    systems = []
    for i in range(n):
        dwell = float(rng.choice([625e-6, 0.005, 0.02, 0.1]))
        size = int(rng.integers(3, LAST - FIRST + 2))
        hops = sorted(int(c) for c in rng.choice(np.arange(FIRST, LAST + 1), size, replace=False))
        fading = fadings[int(rng.integers(len(fadings)))]
        systems.append(sites.system(
            f"s{i}", hops, dwell_s=dwell, packet_airtime_s=dwell * float(rng.uniform(0.1, 0.9)),
            activity_fraction=float(rng.choice([0.03, 0.1, 0.4, 1.0])), tx_power_dbm=float(rng.uniform(-5, 20)),
            bandwidth_hz=float(rng.choice([0.5e6, 1e6, 2e6, 4e6])), wanted_signal_dbm=float(rng.uniform(-85, -55)),
            required_sir_db=float(rng.uniform(6, 14)), fade_margin_db=float(rng.uniform(3, 30)),
            fading=dict(fading)))
    body = sites.site(systems, coupling_loss_db=None, n_channels=N_CHANNELS)
    body["coupling"] = {"entries": [  # both directions given, unequal
        {"from_system": a["id"], "to_system": b["id"], "loss_db": float(rng.uniform(45, 110))}
        for a in systems for b in systems if a is not b]}
    levels = lambda: [{"system": s["id"], "level_dbm": float(rng.uniform(-100, -55))} for s in systems]  # noqa
    lo = 2402e6 + float(rng.uniform(0, N_CHANNELS - 10)) * 1e6
    body["interferers"] = [
        {"id": "wide", "low_hz": lo, "high_hz": lo + float(rng.uniform(0, 8)) * 1e6,
         "activity_fraction": float(rng.uniform(0.05, 1)), "levels": levels()},
        {"id": "reader", "centre_hz": 2402e6 + float(rng.integers(0, N_CHANNELS)) * 1e6, "width_hz": 2e6,
         "activity_fraction": float(rng.uniform(0.05, 1)), "burst_s": 0.0005, "period_s": 0.002,
         "levels": levels()},
        {"id": "beacon", "centre_hz": 2402e6 + float(rng.integers(0, N_CHANNELS)) * 1e6, "width_hz": 0.5e6,
         "activity_fraction": float(rng.uniform(0.05, 1)), "burst_s": 0.004, "period_s": 0.02,
         "levels": levels()}]
    return body


def _transmissions(prep, v: int, sid: str) -> int:
    """Most transmissions of one source that one hop of v can overlap."""
    for a, s in enumerate(prep.site.systems):
        if s.id == sid:
            o = prep.links[v][a].overlap
            return o.k0 + (o.r > 0)
    k = next(k for k, i in enumerate(prep.site.interferers) if i.id == sid)
    o = prep.interferer_links[v][k].overlap
    return 1 if o is None else o.k0 + (o.r > 0)


def compare(prep, trials: int, seed: int):
    """Assert that every system's and source's figure lies in the simulation's interval. Returns the
    simulation."""
    analytic = assess_site(prep)
    sim = simulate_site(prep, trials, seed=seed)
    for f, s in zip(analytic.systems, sim.systems):
        per_source = {src.source_id: src.collision_probability for src in f.sources}
        checks = [("", f.collision_probability, s.collision, Z999)]
        for sid, p in per_source.items():
            rate = s.by_source.get(sid)
            if rate is None:  # the simulation skips sources with no channel in the window
                assert p == 0.0, (f.id, sid)
                continue
            checks.append((sid, p, rate, Z_SOURCES))
        for sid, p, rate, z in checks:
            lo, hi = rate.interval(z)
            assert lo <= p <= hi, (f.id, sid, p, rate.probability, (lo, hi))
    return sim


@pytest.mark.parametrize("seed", range(8))
def test_generated_sites_agree_with_the_evaluator(seed):
    compare(prepare_site(sites.load(generated_site(seed))), 60_000, seed)


@pytest.mark.parametrize("seed", range(3))
def test_generated_sites_at_fading_none_agree_with_the_evaluator(seed):
    # today's threshold figures: the evaluator is exact for every system
    prep = prepare_site(sites.load(generated_site(100 + seed, fadings=[NONE])))
    compare(prep, 60_000, seed)


@pytest.mark.parametrize("link", ["steady", "rayleigh"])
def test_rician_several_transmissions_are_joint(link):
    """Three sources on the victim's channel, one dwell each: the interference powers add, so with steady links
    the hop survives with S(m + 3x) / S(m), S the Rician power's survival (ncx2, Goldsmith ch. 3); with faded
    links with E[S(m + x (g1 + g2 + g3))] / S(m), g ~ Gamma(3, 1) (a sum of three unit exponentials), by
    quadrature (scipy.integrate.quad). The former product over transmissions, 1 - (S(m + x) / S(m))^3 for
    steady links, is below it (S is log-concave) and outside the simulation's interval."""
    rician = {"model": "rician", "k_factor_db": 6.0, "interference": link}
    prep = _co_channel(rician, -3.0, extra_sources=[("b", 5, -3.0), ("c", 5, -3.0)])
    k, m, x = _ratio(6.0), _ratio(-10.0), _ratio(-3.0)
    if link == "steady":
        joint = 1.0 - _rician_survival(k, m + 3 * x) / _rician_survival(k, m)
        one = 1.0 - _rician_survival(k, m + x) / _rician_survival(k, m)
    else:
        kept, _ = integrate.quad(lambda g: 0.5 * g * g * math.exp(-g) * _rician_survival(k, m + g * x), 0, math.inf)
        joint = 1.0 - kept / _rician_survival(k, m)
        one_kept, _ = integrate.quad(lambda g: math.exp(-g) * _rician_survival(k, m + g * x), 0, math.inf)
        one = 1.0 - one_kept / _rician_survival(k, m)
    product = 1.0 - (1.0 - one) ** 3
    assert joint > product + 0.01
    analytic = assess_site(prep).systems[0]
    assert analytic.collision_probability == pytest.approx(joint, rel=1e-7)
    for src in analytic.sources:  # each source alone: the harm of one transmission
        assert src.collision_probability == pytest.approx(one, rel=1e-7)
    sim = simulate_site(prep, 200_000, seed=9).systems[0]
    _within(sim.collision, joint)
    lo, _ = sim.collision.interval(Z999)
    assert lo > product
