"""Every reported figure is recomputed from the response (and request) by tests/recompute.py."""

import copy
import random

import pytest

from cohop import samples
from cohop.api import create_app
from tests import recompute, sites


@pytest.fixture(scope="module")
def client():
    return create_app({"TESTING": True}).test_client()


@pytest.mark.parametrize("name", samples.names())
def test_samples_recompute(client, name):
    body = copy.deepcopy(samples.load(name))
    body["detail"] = "source"
    resp = client.post("/v1/assessments", json=body)
    assert resp.status_code == 200, resp.json
    recompute.check_assessment(resp.json)


#: Every capture model (cohop.physics.capture): the threshold, Rayleigh with steady or faded interference, Rician.
FADINGS = ["none", "rayleigh", {"model": "rayleigh", "interference": "rayleigh"},
           {"model": "rician", "k_factor_db": 6.0, "interference": "rayleigh"}]


def _random_site(rng: random.Random) -> dict:
    n = rng.randint(2, 7)
    count = rng.choice([40, 79])
    systems = []
    for i in range(n):
        size = rng.randint(3, count)
        dwell = rng.choice([0.005, 0.01, 0.02, 0.05])
        systems.append(sites.system(
            f"s{i}", sorted(rng.sample(range(count), size)), dwell_s=dwell,
            packet_airtime_s=dwell * rng.uniform(0.05, 1.0), activity_fraction=rng.uniform(0.05, 1.0),
            tx_power_dbm=rng.uniform(-5, 20), wanted_signal_dbm=rng.uniform(-90, -50),
            required_sir_db=rng.uniform(6, 14), hops_per_attempt=rng.choice([1, 2]), retry_limit=rng.randint(0, 5),
            priority_weight=rng.uniform(0.5, 4), fade_margin_db=rng.uniform(5, 30),
            time_base_group=rng.choice([None, None, f"g{dwell}"]), fading=rng.choice(FADINGS)))
    body = sites.site(systems, coupling_loss_db=None, n_channels=count)
    entries = []
    for a in systems:
        for b in systems:
            if a["id"] != b["id"] and rng.random() < 0.7:
                entries.append({"from_system": a["id"], "to_system": b["id"], "loss_db": rng.uniform(40, 110)})
    have = {(e["from_system"], e["to_system"]) for e in entries}
    for a in systems:  # fill gaps so every ordered pair is explicit or its reverse is
        for b in systems:
            if a["id"] != b["id"] and (a["id"], b["id"]) not in have and (b["id"], a["id"]) not in have:
                entries.append({"from_system": a["id"], "to_system": b["id"], "loss_db": rng.uniform(40, 110)})
                have.add((a["id"], b["id"]))
    body["coupling"] = {"entries": entries}
    if rng.random() < 0.6:
        lo = 2402e6 + rng.uniform(0, count - 10) * 1e6
        body["interferers"] = [{"id": "itf", "low_hz": lo, "high_hz": lo + rng.uniform(0, 8) * 1e6,
                                "activity_fraction": rng.uniform(0.1, 1),
                                "levels": [{"system": s["id"], "level_dbm": rng.uniform(-100, -50)} for s in systems]}]
        if rng.random() < 0.5:
            body["interferers"][0].update(burst_s=0.004, period_s=0.02)
    return body


@pytest.mark.parametrize("seed", range(12))
def test_random_sites_recompute_from_request(client, seed):
    site = _random_site(random.Random(seed))
    resp = client.post("/v1/assessments", json={"site": site, "detail": "source"})
    assert resp.status_code == 200, resp.json
    recompute.check_inputs_from_request(site, resp.json)
    recompute.check_assessment(resp.json)


def test_recompute_catches_a_wrong_figure(client):
    # The checker is not vacuous: altering one reported figure makes it fail.
    body = copy.deepcopy(samples.load("water_works"))
    resp = client.post("/v1/assessments", json=body).json
    resp["systems"][1]["channels"][3]["collision_probability"] *= 1.001
    with pytest.raises(AssertionError):
        recompute.check_assessment(resp)
