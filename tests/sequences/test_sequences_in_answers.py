"""Plans carry sequences; assessments take given sequences; the profile is checked on the real order."""

import copy
import math

import numpy as np
import pytest

from cohop import samples
from cohop.api import create_app
from cohop.regulatory import PROFILES, check_compliance
from cohop.site import RejectionPoint, System


@pytest.fixture(scope="module")
def client():
    return create_app({"TESTING": True}).test_client()


def _us915_system(**kw) -> System:
    base = dict(id="s", tx_power_dbm=30.0, antenna_gain_dbi=0.0, bandwidth_hz=150e3, dwell_s=0.4,
                packet_airtime_s=0.4, activity_fraction=1.0, required_sir_db=10.0,
                rejection=(RejectionPoint(200e3, 40.0),), retry_limit=1)
    base.update(kw)
    return System(**base)


def _check(sequence, system=None):
    p = PROFILES["fcc15.247-902-928"]
    chans = np.unique(sequence)
    centres = 902.1e6 + 200e3 * chans
    return {f.rule.kind: f for f in check_compliance(p, system or _us915_system(), chans, centres, p.band,
                                                                  np.asarray(sequence))}


def test_a_good_sequence_passes_order_and_occupancy():
    # 47 CFR 15.247(a)(1)(i): 50 channels, 0.4 s dwell: each channel 0.4 s in 20 s.
    rng = np.random.default_rng(2)
    seq = rng.permutation(np.arange(0, 100, 2))
    f = _check(seq)
    assert f["sequence"].status == "pass" and f["occupancy"].status == "pass"


def test_a_deliberately_bad_sequence_fails_the_windows_and_the_order():
    # One channel twice per period of 51 hops: unequal use (15.247(a)(1): equal average use) and
    # 0.8 s on it within 20 s (15.247(a)(1)(i): at most 0.4 s).
    seq = np.concatenate([np.arange(0, 100, 2), [0]])
    f = _check(seq)
    assert f["sequence"].status == "fail"
    assert f["occupancy"].status == "fail"
    # a staircase uses channels equally but is not random in direction and magnitude (47 CFR 2.1)
    assert _check(np.arange(0, 100, 2))["sequence"].status == "fail"


def test_plan_returns_a_loadable_sequence_per_system(client):
    body = copy.deepcopy(samples.load("water_works"))
    body["search"] = {"time_limit_s": 1, "sequence_packets": 2000}
    answer = client.post("/v1/plans", json=body).json
    seqs = answer["sequences"]
    plan = {p["id"]: p for p in answer["plan"]}
    for s in seqs["systems"]:
        assert sorted(s["channels"]) == plan[s["id"]]["hop_set"]  # equal use: once per period
        assert s["period_hops"] == len(s["channels"])
        assert s["period_s"] == pytest.approx(s["period_hops"] * s["dwell_s"])
        assert s["spacing"]["min_channels"] >= s["spacing"]["required_channels"]
        assert s["order"]["looks_random"]
        lo, hi = s["retries"]["residual_interval"]
        assert lo <= s["retries"]["residual_loss_probability"] <= hi
    # the profile's order rule is now checked on the sequence, not left as a warning
    for system in answer["assessment"]["systems"]:
        order = [f for f in system["compliance"]["findings"] if f["rule"].endswith(".sequence")][0]
        assert order["status"] == "pass"
    for f in seqs["families"]:
        # Peng and Fan, IEEE Trans. Inf. Theory 50(9), 2004, eq. (1), written out here: a family of M sequences of
        # length L over q symbols has maximum Hamming correlation >= ceil((L M - q) L / ((L M - 1) q)).
        # A linear-congruence family has L = q = p (its prime) and M = the members used.
        length, members, symbols = f["prime"], f["members"], f["prime"]
        expected = max(0, math.ceil((length * members - symbols) * length / ((length * members - 1) * symbols) - 1e-12))
        assert f["peng_fan_bound"] == expected
        if f["measured_max_coincidences"] is not None:
            assert f["measured_max_coincidences"] >= f["peng_fan_bound"]  # no family beats the bound


def test_assessment_accepts_given_sequences(client):
    body = copy.deepcopy(samples.load("container_terminal"))
    cranes = body["site"]["systems"][:2]
    hop = list(range(0, 79, 4))[:15]
    for i, s in enumerate(cranes):
        s["time_base_group"] = "cranes"
        s.pop("hop_set")
        s["sequence"] = [int(c) for c in np.roll(np.array(hop)[np.random.default_rng(1).permutation(15)], -i)]
    answer = client.post("/v1/assessments", json=body).json
    seqs = answer["sequences"]
    assert [s["construction"] for s in seqs["systems"][:2]] == ["given", "given"]
    pair = [p for p in seqs["pairs"] if p["victim"] == cranes[0]["id"] and p["source"] == cranes[1]["id"]][0]
    assert pair["aligned"] and pair["aligned_hit_rate"] == 0.0  # cyclic shifts never meet while aligned
    assert seqs["alignment"]["depends_on_alignment"]
    crane = answer["systems"][0]
    src = [x for x in crane["sources"] if x["id"] == cranes[1]["id"]][0]
    assert src["collision_probability"] == 0.0  # the exact aligned figure replaces the uniform one


def test_sequence_must_match_the_hop_set(client):
    body = copy.deepcopy(samples.load("water_works"))
    body["site"]["systems"][0]["sequence"] = [0, 1, 2]
    resp = client.post("/v1/assessments", json=body)
    assert resp.status_code == 422
    assert any(e["pointer"] == "/site/systems/0/sequence" for e in resp.json["errors"])
