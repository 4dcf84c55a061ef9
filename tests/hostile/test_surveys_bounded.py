"""Survey integration: every channel at once, equal to the channel-by-channel reference, and bounded."""

from __future__ import annotations

import numpy as np
import pytest

from cohop import limits
from cohop.physics.spectrum import (channel_power_mw, channel_powers_mw, range_sums, share_occupied,
                                    shares_occupied)
from tests.api.conftest import post_assessment
from tests.hostile import bodies


@pytest.mark.parametrize("seed", range(20))
def test_every_channel_at_once_equals_one_channel_at_a_time(seed):
    # The reference is the channel-power sum of physics/spectrum.py (common practice), one channel per call.
    rng = np.random.default_rng(seed)
    n = int(rng.integers(2, 80))
    f = 900e6 + np.sort(rng.choice(np.arange(2000), n, replace=False)) * rng.uniform(1e3, 1e5)
    levels = rng.uniform(-250.0, 60.0, n) if seed % 2 else rng.uniform(-120.0, -40.0, n)
    occupancy = rng.uniform(0.0, 1.0, n)
    bw, rbw = rng.uniform(1e3, 5e6), rng.uniform(1.0, 1e6)
    centres = np.linspace(f[0] - 3e6, f[-1] + 3e6, 101)
    powers = channel_powers_mw(f, levels, rbw, centres, bw, 1.2)
    shares = shares_occupied(f, occupancy, centres, bw)
    for c, p, s in zip(centres, powers, shares):
        ref = channel_power_mw(f, levels, rbw, c, bw, 1.2)
        assert np.isnan(p) if ref is None else p == pytest.approx(ref, rel=1e-12, abs=0.0)
        assert s == pytest.approx(share_occupied(f, occupancy, c, bw), rel=1e-12)


def test_a_weak_channel_beside_a_strong_one_keeps_its_digits():
    # A running-sum difference would leave 1e-25 mW of noise after 1e6 mW: nothing. Block sums keep it.
    values = np.array([1e6] * 1000 + [1e-25] * 3)
    assert range_sums(values, [1000, 0], [1003, 1003]) == pytest.approx([3e-25, 1e9 + 3e-25], rel=1e-12)


def test_range_sums_of_every_range():
    values = np.arange(1.0, 14.0)
    lo, hi = np.meshgrid(np.arange(14), np.arange(14))
    want = [[values[a:b].sum() for a, b in zip(r_lo, r_hi)] for r_lo, r_hi in zip(lo, hi)]
    assert range_sums(values, lo, hi).tolist() == want


def test_too_many_derived_interferers_is_a_422(client):
    body = bodies.survey(4000, spike_every=100)  # a -70 dBm spike every 2 MHz on a -100 dBm floor: 40 runs
    body["site"]["surveys"][0]["applies_to"] = ["s0", "s1"]
    body["site"]["grid"]["count"] = 79
    body["site"]["systems"][1]["bandwidth_hz"] = 2e5  # a second bandwidth: integrated twice
    base = post_assessment(client, body)
    assert base.status_code == 200, base.get_data(as_text=True)[:500]
    per_survey = len(base.json["derived_interferers"])
    assert per_survey >= 2
    copies = limits.MAX_DERIVED_INTERFERERS // per_survey + 1
    body["site"]["surveys"] = [dict(body["site"]["surveys"][0], id=f"sv{k}") for k in range(copies)]
    assert copies <= limits.MAX_SURVEYS
    resp = post_assessment(client, body)
    assert resp.status_code == 422 and resp.json["errors"][0]["pointer"] == "/site/surveys"
    assert str(limits.MAX_DERIVED_INTERFERERS) in resp.json["errors"][0]["detail"]


def test_survey_work_and_total_points_are_capped(client):
    body = bodies.survey(limits.MAX_SURVEY_POINTS)
    body["site"]["surveys"] *= 6  # 1.2 M points together (and ids repeat: reported as well)
    resp = post_assessment(client, body)
    assert resp.status_code in (413, 422)
    if resp.status_code == 422:
        assert "/site/surveys" in [e["pointer"] for e in resp.json["errors"]]
    body = bodies.survey(150_000)
    systems = body["site"]["systems"]
    systems += [dict(systems[0], id=f"w{k}", bandwidth_hz=1e5 + 1e3 * k) for k in range(150)]
    body["site"]["coupling"] = {"propagation": {"model": "free_space"}}
    for k, s in enumerate(systems):
        s["position"] = {"x_m": float(k), "y_m": 0.0}
    body["site"]["surveys"][0]["applies_to"] = [s["id"] for s in systems]
    resp = post_assessment(client, body)
    assert resp.status_code == 422 and "/site/surveys" in [e["pointer"] for e in resp.json["errors"]]
    assert "point-channel steps" in resp.get_data(as_text=True)
