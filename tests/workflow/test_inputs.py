"""Input friction: the fading shorthand, messages naming the expected shape, the user's channel numbering."""

from __future__ import annotations

import copy
import math

import pytest

from cohop import samples
from cohop.api import create_app
from cohop.site_rules import load_site

SITE = samples.load("water_works")["site"]


@pytest.fixture(scope="module")
def client():
    return create_app({"TESTING": True}).test_client()


def _assess(client, site):
    return client.post("/v1/assessments", json={"site": site, "detail": "system"})


def _errors(resp) -> dict:
    return {e["pointer"]: e["detail"] for e in resp.get_json()["errors"]}


def test_fading_name_is_shorthand_for_the_object(client):
    as_object, as_name = copy.deepcopy(SITE), copy.deepcopy(SITE)
    as_object["systems"][1]["fading"] = {"model": "rayleigh"}
    as_name["systems"][1]["fading"] = "rayleigh"
    a, b = _assess(client, as_object), _assess(client, as_name)
    assert a.status_code == b.status_code == 200
    assert a.get_json()["systems"] == b.get_json()["systems"]
    assert load_site(as_name).systems[1].fading == load_site(as_object).systems[1].fading


def test_bad_fading_names_the_expected_shape(client):
    site = copy.deepcopy(SITE)
    site["systems"][1]["fading"] = 6
    site["systems"][2]["fading"] = "rician"  # its K-factor needs the object form
    errors = _errors(_assess(client, site))
    assert '"rayleigh"' in errors["/site/systems/1/fading"].replace("'", '"')
    assert '{"model"' in errors["/site/systems/1/fading"]
    assert "k_factor_db" in errors["/site/systems/2/fading/k_factor_db"]


def test_a_non_object_names_its_fields(client):
    site = copy.deepcopy(SITE)
    site["grid"] = [902e6, 200e3, 129]
    message = _errors(_assess(client, site))["/site/grid"]
    assert message.startswith("Expected a JSON object with")
    assert '"first_centre_hz" (required)' in message and '"first_channel_number"' in message


def test_channel_numbering_fields_are_accepted_and_bounded(client):
    site = copy.deepcopy(SITE)
    site["grid"].update(first_channel_number=1, channel_number_step=2)
    assert _assess(client, site).status_code == 200
    site["grid"]["channel_number_step"] = 0
    assert "/site/grid/channel_number_step" in _errors(_assess(client, site))


def _measured_at_one_system(site: dict, interferer: str, system: str, level_dbm: float) -> dict:
    """The interferer measured at one receiver only: levels[] names one system, no eirp_dbm or position."""
    site = copy.deepcopy(site)
    itf = next(i for i in site["interferers"] if i["id"] == interferer)
    itf.pop("eirp_dbm", None)
    itf.pop("position", None)
    itf["levels"] = [{"system": system, "level_dbm": level_dbm}]
    return site


def test_levels_may_leave_systems_out_which_then_do_not_receive_the_interferer(client):
    """README, "Site": a system that levels[] does not list, and for which no level can be computed, does not
    receive the interferer; the answer says so in its assumptions."""
    site = _measured_at_one_system(samples.load("container_terminal")["site"], "canteen-oven", "sts-1", -40.0)
    resp = client.post("/v1/assessments", json={"site": site, "detail": "source"})
    assert resp.status_code == 200, resp.get_json()
    body = resp.get_json()
    others = [s["id"] for s in site["systems"] if s["id"] != "sts-1"]
    line = next(a for a in body["assumptions"] if a.startswith("Interferer 'canteen-oven'"))
    assert all(repr(o) in line for o in others) and "'sts-1'" not in line
    oven_site = next(i for i in site["interferers"] if i["id"] == "canteen-oven")

    def share_of(sid: str) -> float:  # flat spectrum: the victim's share of the oven's width
        victim = next(s for s in site["systems"] if s["id"] == sid)
        return 10 * math.log10(min(1.0, victim["bandwidth_hz"] / (oven_site["high_hz"] - oven_site["low_hz"])))

    for system in body["systems"]:
        oven = next(src for src in system["sources"] if src["id"] == "canteen-oven")
        if system["id"] == "sts-1":  # the measured -40 dBm less the bandwidth share (flat spectrum)
            assert oven["level_dbm"] == pytest.approx(-40.0 + share_of("sts-1"), abs=1e-9)
        else:
            # not received: the lowest level the schema admits, in the victim's channel as any other level
            assert oven["level_dbm"] == pytest.approx(-200.0 + share_of(system["id"]), abs=1e-9)
            assert oven["collision_probability"] == 0.0


def test_an_interferer_with_no_level_anywhere_is_still_refused(client):
    site = _measured_at_one_system(samples.load("container_terminal")["site"], "canteen-oven", "sts-1", -40.0)
    next(i for i in site["interferers"] if i["id"] == "canteen-oven")["levels"] = []
    resp = _assess(client, site)
    assert resp.status_code == 422
    assert "no level for system" in _errors(resp)["/site/interferers/3"]
