"""The Python client against the real service over HTTP, and against stub servers for failures."""

from __future__ import annotations

import copy
import json
import time

import pytest
import requests

from cohop.api import create_app
from cohop.embedded import EMBEDDED_URL, embedded_session
from cohop_client import (Assessment, Client, CohopError, FieldError, Health, InvalidRequest, Profile,
                          RequestTimeout, Rule, ServerError, SystemResult, TransportError)

PROBLEM = "application/problem+json"


@pytest.fixture
def api(live_server):
    with Client(live_server, timeout_s=30) as client:
        yield client


# --- typed results from the live service ------------------------------------

def test_health(api):
    health = api.health()
    assert isinstance(health, Health)
    assert health.status == "ok"
    assert isinstance(health.version, str) and health.version


def test_profiles_match_raw_listing(api, live_server):
    profiles = api.profiles()
    raw = requests.get(live_server + "/v1/profiles", timeout=30).json()
    assert all(isinstance(p, Profile) for p in profiles)
    assert [p.id for p in profiles] == [r["id"] for r in raw]
    assert {"fcc15.247-902-928", "erc7003-863-870"} <= {p.id for p in profiles}
    for p, r in zip(profiles, raw):
        assert p.name == r["name"] and p.region == r["region"]
        assert p.coordination_caution is r["coordination_caution"]
        assert all(isinstance(rule, Rule) for rule in p.rules)
        assert [rule.id for rule in p.rules] == [x["id"] for x in r["rules"]]


def test_one_profile(api):
    us = api.profile("fcc15.247-902-928")
    assert us.id == "fcc15.247-902-928"
    assert us.band_hz == (902e6, 928e6)
    assert isinstance(us.rules, tuple) and us.rules
    assert api.profile("custom").band_hz is None


def test_assess_returns_typed_assessment(api, sample_site):
    result = api.assess(sample_site)
    raw = result.raw
    assert isinstance(result, Assessment)
    assert result.profile_id == raw["profile"]["id"] == sample_site["profile"]
    assert result.cautions == tuple(raw["cautions"]) and result.cautions
    assert result.weighted_collision_probability == raw["summary"]["weighted_collision_probability"]
    assert result.worst_system == raw["summary"]["worst_system"]
    assert result.simulation is None
    assert [s.id for s in result.systems] == [s["id"] for s in sample_site["systems"]]
    for i, system in enumerate(result.systems):
        r = raw["systems"][i]
        assert isinstance(system, SystemResult)
        assert system.raw == r
        assert system.collision_probability == r["per_hop"]["collision_probability"]
        assert system.attempt_loss_probability == r["per_attempt"]["loss_probability"]
        assert system.residual_loss_probability == r["retries"]["residual_loss_probability"]
        assert system.expected_attempts == r["retries"]["expected_attempts"]
        assert system.compliance_status == r["compliance"]["status"]
        assert system.hop_set == tuple(sample_site["systems"][i]["hop_set"])
        assert len(system.findings) == len(r["compliance"]["findings"])
        assert 0.0 <= system.collision_probability <= 1.0
        worst = max(r["sources"], key=lambda s: s["collision_probability"], default=None)
        if worst is not None and worst["collision_probability"] > 0:
            assert system.worst_source == worst["id"]
        else:
            assert system.worst_source is None


def test_system_lookup_and_unknown_id(api, sample_site):
    result = api.assess(sample_site)
    crane = result.system("sludge-crane")
    assert crane.id == "sludge-crane"
    assert crane is result.systems[3]
    with pytest.raises(KeyError):
        result.system("no-such-system")


def test_assess_with_simulation_and_detail(api, sample_site):
    result = api.assess(sample_site, simulation={"trials_per_system": 2000, "seed": 7}, detail="system")
    assert result.simulation is not None
    assert result.simulation["seed"] == 7
    assert result.simulation["trials_per_system"] == 2000
    assert {s["id"] for s in result.simulation["systems"]} == {s.id for s in result.systems}
    assert all(s.raw["channels"] == [] for s in result.systems)
    again = api.assess(sample_site, simulation={"trials_per_system": 2000, "seed": 7}, detail="system")
    assert again.raw == result.raw


# --- errors from the live service -------------------------------------------

def test_invalid_site_gives_field_errors(api, sample_site):
    sample_site["systems"][0]["tx_power_dbm"] = "loud"
    with pytest.raises(InvalidRequest) as info:
        api.assess(sample_site)
    err = info.value
    assert isinstance(err, CohopError)
    assert err.status == 422
    assert err.url.endswith("/v1/assessments")
    assert err.problem["status"] == 422
    pointers = [fe.pointer for fe in err.field_errors]
    assert "/site/systems/0/tx_power_dbm" in pointers
    assert all(isinstance(fe, FieldError) and fe.detail for fe in err.field_errors)
    assert "/site/systems/0/tx_power_dbm" in str(err)


def test_unknown_profile_gives_404(api):
    with pytest.raises(InvalidRequest) as info:
        api.profile("no-such-profile")
    assert info.value.status == 404
    assert info.value.field_errors == []
    assert "no-such-profile" in str(info.value)


def test_profile_id_is_one_path_segment(api):
    for bad in ("../health", "fcc15.247-902-928/../erc7003-863-870"):
        with pytest.raises(InvalidRequest) as info:
            api.profile(bad)
        assert info.value.status == 404


# --- transport failures ------------------------------------------------------

def test_connection_refused_is_transport_error(free_port):
    url = f"http://127.0.0.1:{free_port}"
    with pytest.raises(TransportError) as info:
        Client(url, timeout_s=5).health()
    assert not isinstance(info.value, RequestTimeout)
    assert not isinstance(info.value, requests.RequestException)
    assert info.value.status is None
    assert info.value.url == url + "/v1/health"


def test_silent_server_gives_request_timeout(silent_server):
    srv = silent_server()
    start = time.monotonic()
    with pytest.raises(RequestTimeout) as info:
        Client(srv.url, timeout_s=0.5).health()
    assert time.monotonic() - start < 10
    assert isinstance(info.value, TransportError)
    assert not isinstance(info.value, requests.RequestException)
    assert "0.5" in str(info.value)


def test_stalled_body_gives_request_timeout(silent_server):
    srv = silent_server(b"HTTP/1.1 200 OK\r\nContent-Type: application/json\r\n"
                        b"Content-Length: 100\r\n\r\n{\"sta")
    with pytest.raises(RequestTimeout):
        Client(srv.url, timeout_s=0.5).health()


def test_server_error_with_problem_body(stub_server):
    problem = {"type": "about:blank", "title": "Internal Server Error", "status": 500, "detail": "boom"}
    stub = stub_server(lambda *a: (500, PROBLEM, problem))
    with pytest.raises(ServerError) as info:
        Client(stub.url).health()
    err = info.value
    assert err.status == 500
    assert err.problem == problem
    assert "Internal Server Error" in str(err) and "boom" in str(err)
    assert not isinstance(err, (InvalidRequest, TransportError))


def test_server_error_without_json(stub_server):
    stub = stub_server(lambda *a: (502, "text/html", "<h1>Bad gateway</h1>"))
    with pytest.raises(ServerError) as info:
        Client(stub.url).profiles()
    assert info.value.status == 502 and info.value.problem == {}


def test_client_error_without_json(stub_server):
    stub = stub_server(lambda *a: (400, "text/plain", "nope"))
    with pytest.raises(InvalidRequest) as info:
        Client(stub.url).health()
    assert info.value.status == 400 and info.value.field_errors == []


def test_success_without_json_is_transport_error(stub_server):
    stub = stub_server(lambda *a: (200, "text/html", "<html>proxy login</html>"))
    with pytest.raises(TransportError) as info:
        Client(stub.url).health()
    assert info.value.status == 200


def test_malformed_answer_is_cohop_error(stub_server):
    stub = stub_server(lambda *a: (200, "application/json", {"status": "ok"}))
    with pytest.raises(CohopError):
        Client(stub.url).health()


# --- headers and sessions ----------------------------------------------------

def _echo(method, path, headers, body):
    return 200, "application/json", {"status": "ok", "version": headers.get("Authorization", "<none>")}


def test_token_sent_as_bearer(stub_server):
    stub = stub_server(_echo)
    assert Client(stub.url, token="s3cret").health().version == "Bearer s3cret"
    assert Client(stub.url).health().version == "<none>"
    assert "json" in stub.requests[0]["headers"]["Accept"]


def test_trailing_slash_and_body(stub_server, embedded, sample_site):
    canned = embedded.assess(sample_site).raw
    stub = stub_server(lambda *a: (200, "application/json", canned))
    simulation = {"trials_per_system": 10, "seed": 1}
    result = Client(stub.url + "/").assess(sample_site, simulation=simulation, detail="system")
    assert result.raw == canned
    sent = stub.requests[0]
    assert sent["method"] == "POST" and sent["path"] == "/v1/assessments"
    assert sent["headers"]["Content-Type"] == "application/json"
    assert json.loads(sent["body"]) == {"site": sample_site, "simulation": simulation, "detail": "system"}


class CountingSession(requests.Session):
    closed = 0

    def close(self):
        type(self).closed += 1
        super().close()


def test_context_manager_closes_only_its_own_session(live_server, monkeypatch):
    monkeypatch.setattr(CountingSession, "closed", 0)
    monkeypatch.setattr("cohop_client.session.requests.Session", CountingSession)
    with Client(live_server) as client:
        client.health()
    assert CountingSession.closed == 1

    monkeypatch.setattr(CountingSession, "closed", 0)
    mine = CountingSession()
    with Client(live_server, session=mine) as client:
        client.health()
    assert CountingSession.closed == 0
    assert mine.get(live_server + "/v1/health", timeout=30).json()["status"] == "ok"
    mine.close()


# --- embedded transport -------------------------------------------------------

@pytest.fixture(scope="module")
def embedded():
    with Client(EMBEDDED_URL, session=embedded_session(create_app())) as client:
        yield client


@pytest.mark.parametrize("simulation", [None, {"trials_per_system": 3000, "seed": 5}])
def test_embedded_matches_live(api, embedded, sample_site, simulation):
    live = api.assess(copy.deepcopy(sample_site), simulation=simulation, detail="source")
    local = embedded.assess(copy.deepcopy(sample_site), simulation=simulation, detail="source")
    assert local.raw == live.raw
    assert local == live


def test_embedded_errors_match_live(api, embedded, sample_site):
    sample_site["systems"][0]["tx_power_dbm"] = "loud"
    errors = []
    for client in (api, embedded):
        with pytest.raises(InvalidRequest) as info:
            client.assess(sample_site)
        errors.append(info.value)
    assert errors[0].status == errors[1].status == 422
    assert errors[0].problem == errors[1].problem
    assert embedded.health() == api.health()
    assert embedded.profiles() == api.profiles()
