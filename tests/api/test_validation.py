"""Bad requests to POST /v1/assessments get a clear 4xx problem-details body, never a 500."""

from __future__ import annotations

import json
import sys

import pytest

from cohop import limits
from cohop.api.app import create_app

from tests.problems import pop_at, set_at

from .conftest import ASSESSMENTS, assert_pointer, assert_problem, pointers, post_assessment

SYS0 = "/site/systems/0"


def _sys(i, field, value):
    return set_at(("site", "systems", i, field), value)


# (id, mutation of the water works sample, JSON pointer expected in `errors`)
CASES = [
    ("unknown-top-level", set_at(("surprise",), 1), "/surprise"),
    ("unknown-in-site", set_at(("site", "surprise"), 1), "/site/surprise"),
    ("unknown-in-system", _sys(0, "surprise", 1), f"{SYS0}/surprise"),
    ("unknown-in-grid", set_at(("site", "grid", "surprise"), 1), "/site/grid/surprise"),
    ("unknown-key-escaped", set_at(("site", "a/b~c"), 1), "/site/a~1b~0c"),
    ("string-for-number", _sys(0, "tx_power_dbm", "30"), f"{SYS0}/tx_power_dbm"),
    ("bool-for-number", _sys(0, "tx_power_dbm", True), f"{SYS0}/tx_power_dbm"),
    ("bool-for-integer", _sys(0, "retry_limit", False), f"{SYS0}/retry_limit"),
    ("float-retry-limit", _sys(0, "retry_limit", 3.0), f"{SYS0}/retry_limit"),
    ("fractional-retry-limit", _sys(0, "retry_limit", 2.5), f"{SYS0}/retry_limit"),
    ("float-grid-count", set_at(("site", "grid", "count"), 129.0), "/site/grid/count"),
    ("string-grid-count", set_at(("site", "grid", "count"), "129"), "/site/grid/count"),
    ("number-for-id", _sys(0, "id", 7), f"{SYS0}/id"),
    ("number-for-profile", set_at(("site", "profile"), 915), "/site/profile"),
    ("unknown-profile", set_at(("site", "profile"), "mars-915"), "/site/profile"),
    ("bad-detail", set_at(("detail",), "everything"), "/detail"),
    ("zero-bandwidth", _sys(0, "bandwidth_hz", 0), f"{SYS0}/bandwidth_hz"),
    ("negative-bandwidth", _sys(0, "bandwidth_hz", -150000.0), f"{SYS0}/bandwidth_hz"),
    ("airtime-above-dwell", _sys(0, "packet_airtime_s", 0.05), f"{SYS0}/packet_airtime_s"),
    ("grid-below-band", set_at(("site", "grid", "first_centre_hz"), 901.9e6), "/site/grid/first_centre_hz"),
    ("grid-count-beyond-band", set_at(("site", "grid", "count"), 200), "/site/grid/count"),
    ("grid-count-above-cap", set_at(("site", "grid", "count"), limits.MAX_CHANNELS + 1), "/site/grid/count"),
    ("hop-channel-off-grid", _sys(3, "hop_set", [70, 128, 129]), "/site/systems/3/hop_set/2"),
    ("hop-channel-negative", _sys(0, "hop_set", [-1, 0]), f"{SYS0}/hop_set/0"),
    ("hop-channel-repeated", _sys(0, "hop_set", [1, 2, 3, 2]), f"{SYS0}/hop_set"),
    ("hop-set-empty", _sys(0, "hop_set", []), f"{SYS0}/hop_set"),
    ("duplicate-system-id", _sys(1, "id", "scada-backbone"), "/site/systems/1/id"),
    ("interferer-id-is-system-id", set_at(("site", "interferers", 0, "id"), "dosing-link"), "/site/interferers/0/id"),
    ("coupling-unknown-to", set_at(("site", "coupling", "entries", 0, "to_system"), "ghost"),
     "/site/coupling/entries/0/to_system"),
    ("coupling-unknown-from", set_at(("site", "coupling", "entries", 1, "from_system"), "ghost"),
     "/site/coupling/entries/1/from_system"),
    ("coupling-to-itself", set_at(("site", "coupling", "entries", 0, "to_system"), "scada-backbone"),
     "/site/coupling/entries/0/to_system"),
    ("interferer-level-unknown-system", set_at(("site", "interferers", 1, "levels", 2, "system"), "ghost"),
     "/site/interferers/1/levels/2/system"),
    ("rejection-decreasing", set_at(("site", "systems", 0, "rejection", 2, "rejection_db"), 40.0),
     f"{SYS0}/rejection/2/rejection_db"),
    ("rejection-offsets-not-increasing", set_at(("site", "systems", 0, "rejection", 1, "offset_hz"), 200000.0),
     f"{SYS0}/rejection/1/offset_hz"),
    ("custom-profile-without-band", set_at(("site", "profile"), "custom"), "/site/band"),
    ("band-below-profile-band", set_at(("site", "band"), {"low_hz": 900e6, "high_hz": 928e6}), "/site/band"),
    ("band-above-profile-band", set_at(("site", "band"), {"low_hz": 902e6, "high_hz": 930e6}), "/site/band"),
    ("band-inverted", set_at(("site", "band"), {"low_hz": 910e6, "high_hz": 905e6}), "/site/band/high_hz"),
    ("rician-without-k", pop_at(("site", "systems", 0, "fading", "k_factor_db")), f"{SYS0}/fading/k_factor_db"),
    ("k-without-rician", set_at(("site", "systems", 4, "fading", "k_factor_db"), 3.0),
     "/site/systems/4/fading/k_factor_db"),
    ("wanted-and-link-distance", _sys(0, "link_distance_m", 500.0), f"{SYS0}/wanted_signal_dbm"),
    ("neither-wanted-nor-link-distance", pop_at(("site", "systems", 0, "wanted_signal_dbm")),
     f"{SYS0}/wanted_signal_dbm"),
    ("fade-margin-and-sensitivity", _sys(0, "fade_margin_db", 20.0), f"{SYS0}/fade_margin_db"),
    ("empty-systems", set_at(("site", "systems"), []), "/site/systems"),
    ("null-systems", set_at(("site", "systems"), None), "/site/systems"),
    ("system-not-an-object", set_at(("site", "systems", 0), "scada"), SYS0),
    ("missing-site", pop_at(("site",)), "/site"),
    ("trials-below-minimum", set_at(("simulation",), {"trials_per_system": 10}), "/simulation/trials_per_system"),
    ("float-trials", set_at(("simulation",), {"trials_per_system": 1000.0}), "/simulation/trials_per_system"),
]


@pytest.mark.parametrize("mutate, pointer", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_invalid_field_gives_422_with_pointer(post, sample, mutate, pointer):
    mutate(sample)
    body = assert_pointer(post(sample), pointer)
    assert body["instance"] == ASSESSMENTS
    assert body["detail"]


@pytest.mark.parametrize("literal", ["NaN", "Infinity", "-Infinity"])
@pytest.mark.parametrize("needle, pointer", [
    ('"tx_power_dbm": 30.0', f"{SYS0}/tx_power_dbm"),
    ('"first_centre_hz": 902100000.0', "/site/grid/first_centre_hz"),
])
def test_non_finite_numbers_rejected(post, sample, literal, needle, pointer):
    text = json.dumps(sample)
    assert needle in text
    raw = text.replace(needle, needle.split(":")[0] + ": " + literal, 1)
    assert_pointer(post(data=raw), pointer)


@pytest.mark.parametrize("former, new", [("us-915", "fcc15.247-902-928"), ("eu-868", "erc7003-863-870"),
                                         ("ca-2400", "rss247-2400-2483.5")])
def test_a_former_profile_id_is_refused_with_its_new_id(post, sample, former, new):
    sample["site"]["profile"] = former
    body = assert_pointer(post(sample), "/site/profile")
    detail = body["errors"][0]["detail"]
    assert repr(former) in detail and repr(new) in detail


def test_every_error_is_reported_at_once(post, sample):
    sample["site"]["systems"][0]["tx_power_dbm"] = "high"
    sample["site"]["systems"][2]["bandwidth_hz"] = -1
    sample["site"]["grid"]["count"] = 1.5
    body = assert_problem(post(sample), 422)
    got = pointers(body)
    assert {f"{SYS0}/tx_power_dbm", "/site/systems/2/bandwidth_hz", "/site/grid/count"} <= set(got)
    assert got == sorted(got)


def test_too_many_systems(post, sample):
    template = sample["site"]["systems"][3]
    sample["site"]["systems"] = [dict(template, id=f"s{i}") for i in range(limits.MAX_SYSTEMS + 1)]
    sample["site"]["coupling"]["entries"] = []
    sample["site"]["interferers"] = []
    assert_pointer(post(sample), "/site/systems")


def test_missing_coupling_for_a_pair(post, sample):
    site = sample["site"]
    del site["coupling"]["propagation"]
    site["interferers"] = [i for i in site["interferers"] if "levels" in i]
    for s in site["systems"]:
        s.pop("position", None)
        if s.pop("link_distance_m", None) is not None:
            s["wanted_signal_dbm"] = -80.0
    body = assert_problem(post(sample), 422)
    assert body["errors"] and all(p.startswith("/site/coupling") for p in pointers(body))
    assert "filter-sensors->scada-backbone" in body["errors"][0]["detail"]


def test_simulation_above_server_cap(sample):
    client = create_app({"TESTING": True, "COHOP_MAX_SIMULATED_ATTEMPTS": 10_000}).test_client()
    assert len(sample["site"]["systems"]) == 5
    sample["simulation"] = {"trials_per_system": 5000, "seed": 1}
    assert_pointer(post_assessment(client, sample), "/simulation/trials_per_system")


def test_body_over_size_cap_is_413(sample):
    client = create_app({"TESTING": True, "COHOP_MAX_BODY_BYTES": 1000}).test_client()
    body = assert_problem(post_assessment(client, sample), 413)
    assert "1000" in body["detail"]


@pytest.mark.parametrize("data, content_type", [
    ("site=fcc15.247-902-928", "application/x-www-form-urlencoded"),
    ("hello", "text/plain"),
    (None, None),
])
def test_non_json_body_is_415(client, sample, data, content_type):
    if data is None:
        resp = client.post(ASSESSMENTS)
    else:
        resp = client.post(ASSESSMENTS, data=data, content_type=content_type)
    assert_problem(resp, 415)


@pytest.mark.parametrize("raw", ['{"site": ', "{'site': {}}", '{"site": {},}', "\xff"])
def test_malformed_json_is_400(post, raw):
    assert_problem(post(data=raw), 400)


@pytest.mark.parametrize("raw", ["[1, 2]", "null", '"site"', "42"])
def test_json_that_is_not_an_object_is_422(post, raw):
    assert_pointer(post(data=raw), "")


def test_deeply_nested_json_is_400(post):
    depth = 100_000
    assert_problem(post(data='{"site": ' + "[" * depth + "]" * depth + "}"), 400)


@pytest.mark.skipif(not hasattr(sys, "get_int_max_str_digits"), reason="no int digit limit before Python 3.11")
def test_huge_integer_literal_is_4xx(post, sample):
    raw = json.dumps(sample).replace('"count": 129', '"count": 1' + "0" * 5000, 1)
    resp = post(data=raw)
    assert 400 <= resp.status_code < 500
    assert_problem(resp, resp.status_code)


def _capacity_site(n_systems=200, n_channels=4096, spacing=25e3):
    low = 100e6
    systems = []
    for i in range(n_systems):
        systems.append({
            "id": f"sys-{i:03d}", "tx_power_dbm": 10.0, "bandwidth_hz": 12.5e3, "dwell_s": 0.05,
            "packet_airtime_s": 0.01, "activity_fraction": 0.2, "required_sir_db": 10.0,
            "rejection": [{"offset_hz": 25e3, "rejection_db": 40.0}, {"offset_hz": 50e3, "rejection_db": 60.0}],
            "wanted_signal_dbm": -70.0, "fade_margin_db": 20.0, "retry_limit": 2,
            "position": {"x_m": 15.0 * (i % 20), "y_m": 15.0 * (i // 20)},
            "hop_set": [(i * 20 + k) % n_channels for k in range(20)],
        })
    return {"profile": "custom", "band": {"low_hz": low, "high_hz": low + n_channels * spacing + spacing},
            "grid": {"first_centre_hz": low + spacing, "spacing_hz": spacing, "count": n_channels},
            "systems": systems, "coupling": {"propagation": {"model": "free_space"}}}


def test_documented_minimum_capacity_is_accepted(post):
    resp = post({"site": _capacity_site(), "detail": "system"})
    assert resp.status_code == 200, resp.get_data(as_text=True)[:2000]
    body = resp.get_json()
    assert len(body["systems"]) == 200
    assert {s["channel_count"] for s in body["systems"]} == {20}


# --- bounded work and bounded answers (issue 9) ----------------------------------------------------

def test_a_huge_list_costs_one_error_and_its_elements_are_not_read(post, sample):
    sample["site"]["systems"][0]["hop_set"] = [["bad"]] * (limits.MAX_CHANNELS + 1)
    body = assert_pointer(post(sample), f"{SYS0}/hop_set")
    assert [e["pointer"] for e in body["errors"]] == [f"{SYS0}/hop_set"]


def test_an_answer_lists_at_most_the_cap_and_counts_the_rest(post, sample):
    for s in sample["site"]["systems"]:
        s["hop_set"] = ["x"] * 120  # 120 bad elements each: validation of a list stops at the cap
    body = assert_problem(post(sample), 422)
    per_system = limits.MAX_FIELD_ERRORS + 1  # the first MAX_FIELD_ERRORS elements and the "stopped" note
    total = per_system * len(sample["site"]["systems"])
    assert len(body["errors"]) == limits.MAX_FIELD_ERRORS
    assert body["errors_omitted"] == total - limits.MAX_FIELD_ERRORS
    assert str(total) in body["detail"]
    assert [e["pointer"] for e in body["errors"]] == sorted(e["pointer"] for e in body["errors"])


def test_a_flood_of_unknown_fields_is_cut_short(post, sample):
    sample["site"]["systems"][0].update({f"k{i}": i for i in range(5000)})
    body = assert_pointer(post(sample), f"{SYS0}/k0")
    assert len(body["errors"]) == limits.MAX_FIELD_ERRORS
    assert any("5000 unknown fields" in e["detail"] for e in body["errors"]) or body["errors_omitted"] >= 1


def test_a_megabyte_key_is_not_echoed_back(post, sample):
    sample["site"]["x" * 1_000_000] = 1
    resp = post(sample)
    body = assert_problem(resp, 422)
    assert len(resp.get_data()) < 5000 and body["errors"][0]["pointer"].endswith("(cut)")


@pytest.mark.parametrize("field, value", [("dwell_s", 5e-324), ("packet_airtime_s", 5e-324), ("dwell_s", 1e-5),
                                          ("bandwidth_hz", 5e-324), ("link_distance_m", 1e-3)])
def test_denormal_and_unphysical_values_are_refused(post, sample, field, value):
    sample["site"]["systems"][0][field] = value
    assert_pointer(post(sample), f"{SYS0}/{field}")


@pytest.mark.parametrize("spread, ok", [(5e-324, False), (1e-15, False), (9.99e-9, False), (1e-8, True),
                                        (1e-5, True), (1.01e-5, False)])
def test_delay_spread_has_a_physical_range(post, sample, spread, ok):
    sample["site"]["rms_delay_spread_s"] = spread
    resp = post(sample)
    if ok:
        assert resp.status_code == 200
    else:
        assert_pointer(resp, "/site/rms_delay_spread_s")


def test_more_overlapped_bursts_than_modelled_is_refused_with_the_reason(post, sample):
    sample["site"]["systems"][0].update(dwell_s=0.4, packet_airtime_s=0.4)
    sample["site"]["systems"][1].update(dwell_s=2e-4, packet_airtime_s=1e-4)  # (0.4 + 1e-4) / 2e-4 = 2001
    body = assert_pointer(post(sample), "/site/systems/1/dwell_s")
    assert "2001" in body["errors"][0]["detail"] and "scada-backbone" in body["errors"][0]["detail"]


def test_a_fast_pulsing_interferer_is_told_to_be_continuous(post, sample):
    sample["site"]["interferers"][1].update(burst_s=1e-6, period_s=1e-5, activity_fraction=0.5)
    body = assert_pointer(post(sample), "/site/interferers/1/period_s")
    assert "continuous" in body["errors"][0]["detail"] and "0.05" in body["errors"][0]["detail"]


def test_a_non_finite_answer_is_a_logged_500_problem(caplog):
    app = create_app({"TESTING": True})

    @app.get("/nan")
    def _nan():  # serialised inside the view, as flask-smorest's response decorator does
        import flask

        return flask.jsonify({"x": float("nan")})

    resp = app.test_client().get("/nan")
    assert_problem(resp, 500)
    assert "NaN" not in resp.get_data(as_text=True)
    assert any("non-finite number" in r.getMessage() for r in caplog.records)
