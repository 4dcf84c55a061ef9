"""The endpoints answer as documented: health, profiles, assessments, and HTTP errors."""

from __future__ import annotations

import json

import pytest

from .conftest import ASSESSMENTS, SAMPLE_FILES, assert_problem, load_sample

REQUIRED_PROFILES = ("fcc15.247-902-928", "fcc15.247-2400-2483.5", "fcc15.247-5725-5850", "rss247-902-928", "en300328-2400-2483.5-adaptive", "en300328-2400-2483.5-nonadaptive",
                     "erc7003-863-870", "custom")
CERTAINTIES = {"published", "seen quoted", "partly seen", "from memory", "common practice"}
COORDINATION_REGIONS = ("fcc15.247-", "rss247-")


def _strict_json(resp):
    """Parse a response as standard JSON: NaN and Infinity literals are not JSON."""
    def reject(literal):
        raise AssertionError(f"non-standard JSON literal {literal} in the response")
    return json.loads(resp.get_data(as_text=True), parse_constant=reject)


# --- health -------------------------------------------------------------------

def test_health(client):
    resp = client.get("/v1/health")
    assert resp.status_code == 200
    assert resp.mimetype == "application/json"
    body = resp.get_json()
    assert body["status"] == "ok"
    assert isinstance(body["version"], str) and body["version"]


def test_health_version_is_package_version(client):
    from cohop import __version__
    assert client.get("/v1/health").get_json()["version"] == __version__


# --- profiles -----------------------------------------------------------------

@pytest.fixture
def profiles(client):
    resp = client.get("/v1/profiles")
    assert resp.status_code == 200
    assert resp.mimetype == "application/json"
    return {p["id"]: p for p in resp.get_json()}


def test_profiles_list_the_required_profiles(profiles):
    assert set(REQUIRED_PROFILES) <= set(profiles)


@pytest.mark.parametrize("profile_id", REQUIRED_PROFILES)
def test_every_rule_has_citation_and_certainty(profiles, profile_id):
    profile = profiles[profile_id]
    assert profile["name"] and profile["region"]
    assert profile["rules"], f"{profile_id} has no rules"
    for rule in profile["rules"]:
        assert rule["id"] and rule["title"] and rule["summary"]
        assert isinstance(rule["citation"], str) and rule["citation"].strip()
        assert rule["certainty"] in CERTAINTIES


def test_profile_bands(profiles):
    assert profiles["fcc15.247-902-928"]["band"] == {"low_hz": 902e6, "high_hz": 928e6}
    assert profiles["erc7003-863-870"]["band"] == {"low_hz": 863e6, "high_hz": 870e6}
    assert profiles["custom"]["band"] is None
    for pid, p in profiles.items():
        if p["band"] is not None:
            assert p["band"]["low_hz"] < p["band"]["high_hz"], pid


def test_coordination_caution_flag(profiles):
    for pid, p in profiles.items():
        assert p["coordination_caution"] is pid.startswith(COORDINATION_REGIONS), pid


@pytest.mark.parametrize("profile_id", REQUIRED_PROFILES)
def test_one_profile_matches_the_list(client, profiles, profile_id):
    resp = client.get(f"/v1/profiles/{profile_id}")
    assert resp.status_code == 200
    assert resp.get_json() == profiles[profile_id]


@pytest.mark.parametrize("profile_id", ["us-999", "US-915", "nothing"])
def test_unknown_profile_is_404_problem(client, profile_id):
    body = assert_problem(client.get(f"/v1/profiles/{profile_id}"), 404)
    assert profile_id in body["detail"]
    assert body["instance"] == f"/v1/profiles/{profile_id}"


# --- HTTP errors --------------------------------------------------------------

@pytest.mark.parametrize("method", ["get", "put", "delete", "patch"])
def test_wrong_method_on_assessments_is_405_with_allow(client, method):
    resp = getattr(client, method)(ASSESSMENTS, json={})
    assert_problem(resp, 405)
    allowed = {m.strip() for m in resp.headers["Allow"].split(",")}
    assert "POST" in allowed
    assert method.upper() not in allowed


def test_post_to_get_only_path_is_405(client):
    resp = client.post("/v1/health", json={})
    assert_problem(resp, 405)
    assert "GET" in resp.headers["Allow"]


@pytest.mark.parametrize("path", ["/nope", "/v1", "/v1/assessment", "/v1/profiles/fcc15.247-902-928/rules", "/v2/health"])
def test_unknown_path_is_404_problem(client, path):
    body = assert_problem(client.get(path), 404)
    assert body["instance"] == path


def test_non_json_post_to_unknown_path_is_404(client):
    assert_problem(client.post("/nope", data="x", content_type="text/plain"), 404)


def test_non_json_post_to_get_only_path_is_405(client):
    resp = client.post("/v1/health", data="x", content_type="text/plain")
    assert_problem(resp, 405)
    assert "GET" in resp.headers.get("Allow", "")


# --- assessments --------------------------------------------------------------

@pytest.fixture(params=SAMPLE_FILES)
def sample_name(request):
    return request.param


def _assess(client, body):
    resp = client.post(ASSESSMENTS, json=body)
    assert resp.status_code == 200, resp.get_data(as_text=True)[:2000]
    assert resp.mimetype == "application/json"
    return _strict_json(resp)


def test_samples_exist():
    assert "water_works.json" in SAMPLE_FILES
    profiles = {load_sample(name)["site"]["profile"] for name in SAMPLE_FILES}
    assert any(pid.startswith("en300328-") for pid in profiles)


def test_sample_assessment_shape(client, sample_name):
    request = load_sample(sample_name)
    body = _assess(client, request)
    assert body["profile"]["id"] == request["site"]["profile"]
    assert [s["id"] for s in body["systems"]] == [s["id"] for s in request["site"]["systems"]]
    assert body["assumptions"]
    assert body["summary"]["worst_system"] in {s["id"] for s in request["site"]["systems"]}
    assert body["simulation"] is None
    for s in body["systems"]:
        assert 0.0 <= s["per_hop"]["collision_probability"] <= 1.0
        assert 0.0 <= s["per_attempt"]["loss_probability"] <= 1.0
        assert 0.0 <= s["retries"]["residual_loss_probability"] <= 1.0
        assert s["compliance"]["status"] in {"pass", "warning", "fail"}
        for finding in s["compliance"]["findings"]:
            assert finding["citation"] and finding["certainty"] in CERTAINTIES


def test_sample_cautions(client, sample_name):
    request = load_sample(sample_name)
    cautions = _assess(client, request)["cautions"]
    text = " ".join(cautions).lower()
    for words in ("planning estimate", "site survey", "regulat"):
        assert words in text, f"no caution mentions {words!r}"
    coordination = [c for c in cautions if "15.247(h)" in c]
    if request["site"]["profile"].startswith(COORDINATION_REGIONS):
        assert coordination, "US/CA profile without the 15.247(h) coordination caution"
    else:
        assert not coordination, "non-US/CA profile carries the 15.247(h) caution"


def test_eu_sample_has_no_coordination_caution(client):
    eu = [n for n in SAMPLE_FILES if load_sample(n)["site"]["profile"].startswith(("en300328-", "erc7003-"))]
    assert eu, "no EU sample"
    for name in eu:
        assert not any("15.247(h)" in c for c in _assess(client, load_sample(name))["cautions"])


@pytest.mark.parametrize("detail", ["system", "channel", "source"])
def test_detail_levels(client, sample, detail):
    sample["detail"] = detail
    systems = _assess(client, sample)["systems"]
    for s in systems:
        channels = s.get("channels") or []
        if detail == "system":
            assert not channels
        else:
            assert len(channels) == s["channel_count"] == len(s["hop_set"])
            assert all(("by_source" in c) == (detail == "source") for c in channels)


def test_assessment_is_deterministic(client, sample):
    sample["simulation"] = {"trials_per_system": 2000, "seed": 11}
    first, second = _assess(client, sample), _assess(client, sample)
    assert first == second
    sim = first["simulation"]
    assert sim["seed"] == 11 and sim["trials_per_system"] == 2000
    assert {s["id"] for s in sim["systems"]} == {s["id"] for s in sample["site"]["systems"]}


def test_problem_instance_and_type_for_invalid_request(client):
    body = assert_problem(client.post(ASSESSMENTS, json={"site": {}}), 422)
    assert body["type"].startswith("urn:cohop:problem:")
    assert body["instance"] == ASSESSMENTS
