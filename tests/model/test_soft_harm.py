"""The evaluator with fading-aware (soft) harm: the kernel's tables and the several-dwell law.

Sources: the without-replacement law is checked against a brute-force enumeration of every permutation hop
order and phase (derived; the domain reference's "several dwells in one packet"); the harm of one
transmission against the closed forms of Kahlon et al., IEEE WCL 1(5), 2012 (Rayleigh-faded wanted signal,
steady interferer: 1 - exp(-x)); with `fading: none` the figures are today's threshold ones.
"""

import copy
import itertools
import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from cohop.assess import assess_site, channel_prefix_counts, system_collisions
from cohop.prepare import prepare_site
from cohop.assess import resolve_hop_sets
from cohop.stats.overlap import distinct_survival_at, distinct_survival_weighted, near_symmetric, survival_distinct
from cohop import samples
from tests import sites

# A receiver whose rejection rises in small steps, so that a faded neighbour harms several offsets by
# different amounts (values are a test's, not a radio's).
STEPPED = [{"offset_hz": 1e6, "rejection_db": 6.0}, {"offset_hz": 2e6, "rejection_db": 14.0},
           {"offset_hz": 3e6, "rejection_db": 25.0}]


def _pair(victim_hops, source_hops, *, packet_s, dwell_s, activity, fading="rayleigh", loss_db=62.0):
    victim = sites.system("v", victim_hops, packet_airtime_s=packet_s, dwell_s=0.1, rejection=STEPPED,
                          fading=fading)
    source = sites.system("a", source_hops, packet_airtime_s=dwell_s, dwell_s=dwell_s, activity_fraction=activity,
                          rejection=STEPPED, fading=fading)
    return prepare_site(sites.load(sites.site([victim, source], coupling_loss_db=loss_db, n_channels=12)))


def test_harm_table_is_the_closed_form():
    # excess 9 dB co-channel (I = -62 dBm, threshold -71 dBm); Kahlon et al.: rho = 1 - exp(-10^((E - R)/10))
    prep = _pair([0], [0, 1], packet_s=0.001, dwell_s=0.01, activity=1.0)
    rho = prep.harm.system_harm(0, np.arange(5))[1]
    want = [-math.expm1(-10 ** ((9.0 - r) / 10)) for r in (0.0, 6.0, 14.0, 25.0, 25.0)]
    want = [w if w >= 1e-3 else 0.0 for w in want]
    assert rho.tolist() == pytest.approx(want, rel=1e-12)
    # harm reaches every offset (16 dB under the threshold beyond 3 MHz still harms 2.5 %); the threshold window 1
    assert prep.harm.reach[0, 1] == prep.n_channels and prep.window[0, 1] == 1


def _enumerated(prep, victim_channel, source_hops, k_dist, activity):
    """P(hit) for one victim channel: every permutation order of the source's channels and every start, K
    consecutive dwells (wrapping), each destroying with activity x rho(offset) independently."""
    rho = prep.harm.system_harm(0, np.arange(prep.n_channels))[1]
    total, count = 0.0, 0
    for order in itertools.permutations(source_hops):
        n = len(order)
        for start in range(n):
            survive = 0.0
            for k, pk in k_dist.items():
                s = 1.0
                for j in range(k):
                    s *= 1 - activity * rho[abs(order[(start + j) % n] - victim_channel)]
                survive += pk * s
            total += 1 - survive
            count += 1
    return total / count


@pytest.mark.parametrize("packet_s,activity", [(0.001, 1.0), (0.025, 0.7), (0.045, 0.4), (0.07, 0.9)])
def test_several_dwells_against_enumeration(packet_s, activity):
    # K = (T_v + T_a) / D_a overlapped dwells: 1.1, 3.5, 5.5, 8 (more than the 5 channels: wraps) dwells of 10 ms
    source_hops = [0, 1, 3, 4, 7]
    prep = _pair([1, 2, 5], source_hops, packet_s=packet_s, dwell_s=0.01, activity=activity)
    link = prep.links[0][1]
    k_dist = link.overlap.probabilities()
    sets = [np.array([1, 2, 5]), np.array(source_hops)]
    x = system_collisions(prep, 0, sets[0], channel_prefix_counts(prep, sets), np.array([3, 5]))
    for i, c in enumerate(sets[0]):
        assert x[1, i] == pytest.approx(_enumerated(prep, int(c), source_hops, k_dist, activity), rel=1e-10)


def test_fading_none_is_the_threshold():
    # fading none: harm 1 inside the threshold window, 0 outside, so the figures are the 0/1 ones
    prep = _pair([1, 2, 5], [0, 1, 3, 4, 7], packet_s=0.025, dwell_s=0.01, activity=0.7, fading="none")
    rho = prep.harm.system_harm(0, np.arange(6))[1]
    w = prep.window[0, 1]
    assert rho.tolist() == [1.0 if d <= w else 0.0 for d in range(6)]
    assert prep.harm.reach[0, 1] == w


@settings(max_examples=60, deadline=None)
@given(st.integers(1, 30), st.integers(0, 30), st.integers(0, 60), st.floats(0.0, 1.0))
def test_weighted_law_reduces_to_the_hypergeometric(size, harmful, overlaps, activity):
    # With rho in {0, 1} the weighted law is the hypergeometric one (cohop.stats.overlap.distinct_survival_at)
    harmful = min(harmful, size)
    keep = 1 - activity
    e = near_symmetric([np.array(harmful)], [np.array(keep)], harmful)
    got = distinct_survival_weighted(overlaps, e, harmful, keep**harmful, size - harmful, 1.0, size)
    assert got == pytest.approx(distinct_survival_at(overlaps, harmful, size, activity), rel=1e-9, abs=1e-12)


@pytest.mark.parametrize("name", samples.names())
def test_samples_at_fading_none_keep_todays_figures(name):
    # The same site with fading none everywhere is today's threshold model: its figures equal the 0/1 window's
    # hypergeometric ones (computed here from prep.window directly).
    body = copy.deepcopy(samples.load(name)["site"])
    for s in body["systems"]:
        s["fading"] = "none"
    prep = prepare_site(sites.load(body))
    assert (prep.harm.reach == np.where(prep.window >= prep.n_channels - 1, prep.n_channels, prep.window)).all()
    sets, _ = resolve_hop_sets(prep)
    prefix, sizes = channel_prefix_counts(prep, sets), np.array([s.size for s in sets])
    for v in range(prep.n_systems):
        w, ch = prep.window[v][:, None], sets[v][None, :]
        lo, hi = np.clip(ch - w, 0, prep.n_channels), np.clip(ch + w + 1, 0, prep.n_channels)
        h = np.take_along_axis(prefix, hi, 1) - np.take_along_axis(prefix, lo, 1)
        old = 1 - survival_distinct(prep.overlap_k0[v][:, None], prep.overlap_r[v][:, None], h, sizes[:, None],
                                    prep.activity[:, None])
        old[prep.window[v] < 0] = 0.0
        old[v] = 0.0
        assert system_collisions(prep, v, sets[v], prefix, sizes) == pytest.approx(old, abs=1e-12)


@pytest.mark.parametrize("name", samples.names())
def test_both_evaluation_paths_agree(name, monkeypatch):
    # Victims whose harm varies over many offsets are evaluated by steps of their rejection table (prefix
    # counts) instead of offset by offset; both paths compute the same law.
    from cohop import assess

    prep = prepare_site(sites.load(copy.deepcopy(samples.load(name)["site"])))
    by_offsets = assess_site(prep)
    monkeypatch.setattr(assess, "_CHUNK_CELLS", 0)
    by_steps = assess_site(prep)
    for a, b in zip(by_offsets.systems, by_steps.systems):
        assert b.collision_probability == pytest.approx(a.collision_probability, rel=1e-9, abs=1e-15)


def test_harm_varying_over_hundreds_of_offsets(monkeypatch):
    # A receiver whose rejection rises 0.5 dB per 40 kHz over 64 rows and neighbours 20 dB over the threshold:
    # the harm varies over hundreds of offsets of a 4096-channel grid. Offset by offset and by steps of the
    # table (what a larger site gets) give the same figures.
    from cohop import assess

    rejection = [{"offset_hz": 40e3 * (k + 1), "rejection_db": 0.5 * (k + 1)} for k in range(64)]
    systems = [sites.system(f"s{i}", range(i, 4096, 8), bandwidth_hz=10e3, rejection=rejection, dwell_s=0.01,
                            packet_airtime_s=0.002) for i in range(8)]
    body = sites.site(systems, coupling_loss_db=51.0, n_channels=4096)  # 20 dB over the threshold co-channel
    body["grid"]["spacing_hz"] = 10e3
    body["band"]["high_hz"] = 2402e6 + 4096 * 10e3
    prep = prepare_site(sites.load(body))
    assert prep.harm.varying_reach()[0].max() >= 150
    by_offsets = assess_site(prep)
    monkeypatch.setattr(assess, "_CHUNK_CELLS", 0)
    by_steps = assess_site(prep)
    for a, b in zip(by_offsets.systems, by_steps.systems):
        assert 0.0 < a.collision_probability < 1.0
        assert b.collision_probability == pytest.approx(a.collision_probability, rel=1e-9)


def test_an_evaluation_past_the_harm_cap_is_refused(client, monkeypatch):
    # limits.MAX_HARM_CELLS bounds the evaluation's work (systems x hop-set channels x varying steps, summed over
    # victims): past it the answer is a 422 naming the cap, for assessments and plans alike.
    from cohop import assess, limits

    body = copy.deepcopy(samples.load("water_works"))
    prep = prepare_site(sites.load(copy.deepcopy(body["site"])))
    sets, _ = assess.resolve_hop_sets(prep)
    cells = assess.harm_cells(prep, sets)
    assert cells > 0
    monkeypatch.setattr(limits, "MAX_HARM_CELLS", cells - 1)
    resp = client.post("/v1/assessments", json=body)
    assert resp.status_code == 422 and "cells of harm" in resp.get_data(as_text=True)
    monkeypatch.setattr(limits, "MAX_HARM_CELLS", cells)
    assert client.post("/v1/assessments", json=body).status_code == 200
