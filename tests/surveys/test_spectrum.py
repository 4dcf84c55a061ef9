"""Survey traces into channel powers and interferers (channel-power method, common practice)."""

import math

import numpy as np
import pytest

from cohop.api import create_app
from cohop.physics.spectrum import channel_power_mw, point_shares_hz
from cohop.prepare import prepare_site
from cohop.surveys import channel_levels, derive
from tests import sites


def test_channel_power_is_the_sum_of_bins_scaled_by_width_over_rbw():
    # Hand computed: points every 25 kHz read -90, -87, -93, -90 dBm in a 25 kHz RBW; a 100 kHz channel
    # centred on them collects each point's whole share: P = sum 10^(L/10) * 25e3 / 25e3.
    f = np.array([899.9625, 899.9875, 900.0125, 900.0375]) * 1e6
    levels = [-90.0, -87.0, -93.0, -90.0]
    p = channel_power_mw(f, levels, 25e3, 900.0e6, 100e3)
    expected = sum(10 ** (lv / 10) for lv in levels)
    assert p == pytest.approx(expected, rel=1e-12)
    # by hand: 1.000e-9 + 1.995e-9 + 0.501e-9 + 1.000e-9 = 4.496e-9 mW = -83.47 dBm
    assert 10 * math.log10(p) == pytest.approx(-83.47, abs=0.01)


def test_bins_finer_than_the_rbw_are_scaled_down():
    # A flat density of -100 dBm per 10 kHz RBW sampled every 1 kHz over a 50 kHz channel:
    # P = 50 points * 10^-10 mW * (1 kHz / 10 kHz) = 5e-10 mW = -93.0 dBm (= -100 + 10 log10(50/10)).
    f = np.arange(999.9e6, 1000.1e6 + 1, 1e3)
    p = channel_power_mw(f, np.full(f.size, -100.0), 10e3, 1000.0e6, 50e3)
    assert 10 * math.log10(p) == pytest.approx(-100 + 10 * math.log10(5), abs=0.01)


def test_coarse_trace_interpolates_the_density():
    # Points 1 MHz apart, RBW 100 kHz: a 200 kHz channel between two -80 dBm points gets -80 + 10 log10(2).
    p = channel_power_mw([1e9, 1.001e9], [-80.0, -80.0], 100e3, 1.0005e9, 200e3)
    assert 10 * math.log10(p) == pytest.approx(-80 + 10 * math.log10(2), abs=1e-9)


def test_uncovered_channel_is_unknown():
    assert channel_power_mw([1e9, 1.001e9], [-80.0, -80.0], 100e3, 2e9, 200e3) is None


def test_point_shares_are_midpoints():
    lo, hi = point_shares_hz([0.0, 10.0, 30.0])
    assert lo.tolist() == [-5.0, 5.0, 20.0] and hi.tolist() == [5.0, 20.0, 40.0]


def _surveyed_site(levels_fn, occupancy=None):
    f = np.arange(2400e6, 2483e6, 50e3)
    survey = {"id": "sweep", "applies_to": ["v"], "frequencies_hz": f.tolist(), "levels_dbm": levels_fn(f).tolist(),
              "resolution_bandwidth_hz": 50e3}
    if occupancy is not None:
        survey["occupancy_fraction"] = occupancy(f).tolist()
    body = sites.site([sites.system("v", range(79))], coupling_loss_db=None)
    body["surveys"] = [survey]
    return body


def test_a_known_tone_is_recovered_in_its_channel():
    # A -40 dBm tone read in one 50 kHz bin at 2440 MHz on a -120 dBm floor: the channel holding it
    # (grid channel 38, centre 2440 MHz) gets -40 dBm (the floor adds about 1e-8 of it).
    tone = lambda f: np.where(np.isclose(f, 2440e6), -40.0, -120.0)  # noqa: E731
    prep = prepare_site(sites.load(_surveyed_site(tone)))
    assert len(prep.derived) == 1
    d = prep.derived[0]
    assert d.channels == (38, 38)
    assert d.channel_level_dbm == pytest.approx(-40.0, abs=0.01)
    assert d.interferer.low_hz == d.interferer.high_hz == 2440e6


def test_a_known_wideband_signal_is_recovered_with_its_edges_and_level():
    # 20 MHz at -90 dBm per 50 kHz RBW from 2412 to 2432 MHz: each fully covered 1 MHz channel collects
    # -90 + 10 log10(1 MHz / 50 kHz) = -76.99 dBm; the edge channels hold half and fall in other runs.
    wide = lambda f: np.where((f >= 2412e6) & (f < 2432e6), -90.0, -125.0)  # noqa: E731
    site = sites.load(_surveyed_site(wide, occupancy=lambda f: np.where((f >= 2412e6) & (f < 2432e6), 0.3, 0.0)))
    centres = 2402e6 + 1e6 * np.arange(79)
    levels, activity = channel_levels(site.surveys[0], centres, 1e6)
    assert levels[15] == pytest.approx(-90 + 10 * math.log10(20), abs=0.01)
    derived = derive(site, centres)
    main = max(derived, key=lambda d: d.channels[1] - d.channels[0])
    assert main.channels == (11, 29)  # 2413..2431 MHz fully inside; 2412 and 2432 hold half the band
    assert main.channel_level_dbm == pytest.approx(-76.99, abs=0.01)
    assert main.interferer.activity_fraction == pytest.approx(0.3)


def test_derived_interferers_feed_the_evaluation():
    wide = lambda f: np.where((f >= 2412e6) & (f < 2432e6), -70.0, -125.0)  # noqa: E731
    client = create_app({"TESTING": True}).test_client()
    answer = client.post("/v1/assessments", json={"site": _surveyed_site(wide)}).json
    assert answer["derived_interferers"] and answer["derived_interferers"][0]["survey"] == "sweep"
    ids = {s["id"] for s in answer["systems"][0]["sources"]}
    assert any(i.startswith("survey/sweep/v/") for i in ids)
    assert answer["systems"][0]["per_hop"]["collision_probability"] > 0.2  # about 20 of 79 channels hit


@pytest.mark.parametrize("mutate, pointer", [
    (lambda s: s["frequencies_hz"].reverse(), "/site/surveys/0/frequencies_hz/1"),  # unsorted
    (lambda s: s["frequencies_hz"].__setitem__(3, s["frequencies_hz"][2]), "/site/surveys/0/frequencies_hz/3"),
    (lambda s: s["levels_dbm"].pop(), "/site/surveys/0/levels_dbm"),  # mismatched lengths
    (lambda s: s.__setitem__("resolution_bandwidth_hz", 0.0), "/site/surveys/0/resolution_bandwidth_hz"),
    (lambda s: s.__setitem__("applies_to", ["nobody"]), "/site/surveys/0/applies_to/0"),
    (lambda s: s.__setitem__("occupancy_fraction", [0.5]), "/site/surveys/0/occupancy_fraction"),
])
def test_malformed_traces_are_rejected(mutate, pointer):
    body = _surveyed_site(lambda f: np.full(f.size, -100.0))
    mutate(body["surveys"][0])
    resp = create_app({"TESTING": True}).test_client().post("/v1/assessments", json={"site": body})
    assert resp.status_code == 422
    assert pointer in [e["pointer"] for e in resp.json["errors"]]


def test_nan_in_a_trace_is_rejected():
    import json

    body = _surveyed_site(lambda f: np.full(f.size, -100.0))
    text = json.dumps({"site": body}).replace("-100.0", "NaN", 1)
    resp = create_app({"TESTING": True}).test_client().post("/v1/assessments", data=text,
                                                            content_type="application/json")
    assert resp.status_code == 422
    assert any(e["pointer"].startswith("/site/surveys/0/levels_dbm/") for e in resp.json["errors"])


def _positioned(survey_at, radius=None, floors=(0, 0, 1)):
    """Three systems at x = 0, 30 and 5 m (the last on the floor given); one wideband emitter surveyed."""
    wide = lambda f: np.where((f >= 2412e6) & (f < 2432e6), -70.0, -125.0)  # noqa: E731
    body = _surveyed_site(wide)
    body["systems"] = [sites.system(sid, range(79), position={"x_m": x, "y_m": 0.0, "floor": fl})
                       for sid, x, fl in zip("abc", (0.0, 30.0, 5.0), floors)]
    body["coupling"] = {"propagation": {"model": "free_space"}}  # a complete site (the survey needs none)
    survey = body["surveys"][0]
    del survey["applies_to"]
    survey["position"] = survey_at
    if radius is not None:
        survey["radius_m"] = radius
    return body


def test_a_survey_at_a_position_stands_for_the_receivers_near_it():
    # Taken 2 m from a: with the default 10 m radius it stands for a only (b is 28 m off, c on another
    # floor); with 40 m for a and b. Each system then gets what a survey naming it would give.
    near = derive(sites.load(_positioned({"x_m": 2.0, "y_m": 0.0})), 2402e6 + 1e6 * np.arange(79))
    assert {d.system for d in near} == {"a"}
    wider = derive(sites.load(_positioned({"x_m": 2.0, "y_m": 0.0}, radius=40.0)), 2402e6 + 1e6 * np.arange(79))
    assert {d.system for d in wider} == {"a", "b"}
    named = _positioned({"x_m": 2.0, "y_m": 0.0})
    named["surveys"][0].pop("position")
    named["surveys"][0]["applies_to"] = ["a", "b"]
    by_name = derive(sites.load(named), 2402e6 + 1e6 * np.arange(79))
    key = lambda d: (d.system, d.channels, round(d.channel_level_dbm, 9))  # noqa: E731
    assert sorted(map(key, wider)) == sorted(map(key, by_name))


def test_a_survey_on_another_floor_reaches_that_floor_only():
    derived = derive(sites.load(_positioned({"x_m": 5.0, "y_m": 0.0, "floor": 1})), 2402e6 + 1e6 * np.arange(79))
    assert {d.system for d in derived} == {"c"}


@pytest.mark.parametrize("change, pointer, words", [
    (lambda s: s.__setitem__("position", {"x_m": 500.0, "y_m": 0.0}), "/site/surveys/0/position", "nearest is 'b'"),
    (lambda s: s.__setitem__("applies_to", ["a"]), "/site/surveys/0/applies_to", "exactly one"),
    (lambda s: s.pop("position"), "/site/surveys/0/applies_to", "exactly one"),
])
def test_position_surveys_that_stand_for_nobody_are_rejected(change, pointer, words):
    body = _positioned({"x_m": 2.0, "y_m": 0.0})
    change(body["surveys"][0])
    resp = create_app({"TESTING": True}).test_client().post("/v1/assessments", json={"site": body})
    assert resp.status_code == 422
    errors = {e["pointer"]: e["detail"] for e in resp.json["errors"]}
    assert pointer in errors and words in errors[pointer], errors
