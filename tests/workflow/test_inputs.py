"""Input friction: the fading shorthand, messages naming the expected shape, the user's channel numbering."""

from __future__ import annotations

import copy

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
