"""Long packets against short dwells: many overlapped bursts, handled exactly and within bounds.

The site of issue 9: a system with 0.4 s dwells and 0.1 s packets beside one hopping every 625 us with
366 us packets (k0 = floor((0.1 + 366e-6) / 625e-6) = 160 overlapped bursts). The simulation used to
count overlaps in int8 and crashed; it must now agree with the analytic model (the geometric-probability overlap
model of cohop.stats.overlap, E[(1 - p)^K]) within its confidence interval, through the API and in the domain.
"""

from __future__ import annotations

import math

import pytest

from cohop import limits
from cohop.prepare import prepare_site
from cohop.stats.overlap import random_phase_overlap
from tests.api.conftest import load_sample, post_assessment
from tests.model.test_montecarlo_fading import compare
from tests.sites import load


def _long_packet_site() -> dict:
    body = load_sample()
    body["site"]["systems"][0].update(dwell_s=0.4, packet_airtime_s=0.1)
    body["site"]["systems"][1].update(dwell_s=625e-6, packet_airtime_s=366e-6)
    return body


def test_the_overlap_count_of_the_issue_site():
    k = random_phase_overlap(0.1, 366e-6, 625e-6)
    assert k.k0 == 160 and k.r == pytest.approx((0.1 + 366e-6) / 625e-6 - 160)


def test_the_issue_site_simulates_through_the_api(client):
    body = _long_packet_site()
    body["simulation"] = {"trials_per_system": 10_000, "seed": 0}
    resp = post_assessment(client, body)
    assert resp.status_code == 200, resp.get_data(as_text=True)[:2000]
    sim = resp.get_json()["simulation"]
    assert [s["trials"] >= 10_000 for s in sim["systems"]] == [True] * 5
    victim = sim["systems"][0]
    long_source = next(s for s in victim["by_source"] if s["id"] == "filter-sensors")
    assert long_source["analytic_probability"] > 0.4  # 160 overlapped bursts: a hit is likely


@pytest.mark.parametrize("seed", [1, 2])
def test_the_simulation_agrees_with_the_model_on_the_issue_site(seed):
    # every figure within the simulation's interval, the Rician systems' joint figures included
    # (tests/model/test_montecarlo_fading.py)
    prep = prepare_site(load(_long_packet_site()["site"]))
    compare(prep, 100_000, seed)


def test_the_overlap_cap_covers_a_longest_fcc_dwell_against_bluetooth_slots():
    # 47 CFR 15.247(a)(1)(i): 0.4 s occupancy; Bluetooth slots 625 us (from memory): 641 bursts.
    assert math.ceil((0.4 + 625e-6) / 625e-6) <= limits.MAX_OVERLAPS


@pytest.mark.parametrize("times", [(1e-3, 1e-3, 5e-324), (0.0, 1e-3, 1e-3), (1.0, 1.0, -1.0)])
def test_the_overlap_model_refuses_what_requests_cannot_carry(times):
    with pytest.raises(ValueError):
        random_phase_overlap(*times)
