"""Bearer tokens, Prometheus metrics and JSON access logs, in-process."""

import copy
import json
import logging

import pytest

from cohop import samples
from cohop.api import create_app
from cohop.api.auth import authorised

TOKENS = ("token-one-aaaaaaaaaaaa", "token-two-bbbbbbbbbbbb")


@pytest.fixture()
def client():
    return create_app({"TESTING": True, "COHOP_TOKENS": TOKENS}).test_client()


def test_missing_or_wrong_token_is_401_problem_with_challenge(client):
    for headers in ({}, {"Authorization": "Bearer nope"}, {"Authorization": "Basic abc"}):
        resp = client.get("/v1/profiles", headers=headers)
        assert resp.status_code == 401
        assert resp.content_type == "application/problem+json"
        assert resp.headers["WWW-Authenticate"].startswith("Bearer realm=\"cohop\"")


def test_every_configured_token_works_for_rotation(client):
    for t in TOKENS:
        assert client.get("/v1/profiles", headers={"Authorization": f"Bearer {t}"}).status_code == 200


def test_probes_and_api_description_stay_open(client):
    for path in ("/v1/health", "/v1/ready", "/openapi.json"):
        assert client.get(path).status_code == 200
    assert client.get("/metrics").status_code == 401
    app = create_app({"TESTING": True, "COHOP_TOKENS": TOKENS, "COHOP_METRICS_PUBLIC": True})
    assert app.test_client().get("/metrics").status_code == 200


def test_token_comparison_checks_every_token():
    assert authorised(TOKENS, TOKENS[1]) and not authorised(TOKENS, TOKENS[1][:-1]) and not authorised(TOKENS, None)


def test_no_auth_when_no_tokens():
    assert create_app({"TESTING": True}).test_client().get("/v1/profiles").status_code == 200


def test_metrics_count_requests_latency_and_rejections():
    app = create_app({"TESTING": True, "COHOP_MAX_SOLVE_S": 0.5})
    c = app.test_client()
    c.get("/v1/health")
    c.post("/v1/assessments", data="x", content_type="text/plain")
    body = copy.deepcopy(samples.load("water_works"))
    body["search"] = {"time_limit_s": 0.3, "sequence_packets": 1000}
    assert c.post("/v1/plans", json=body).status_code == 200
    text = c.get("/metrics").get_data(as_text=True)
    assert 'cohop_requests_total{method="GET",route="/v1/health",status="200"} 1.0' in text
    assert 'cohop_requests_total{method="POST",route="/v1/assessments",status="415"} 1.0' in text
    assert 'cohop_request_duration_seconds_bucket{le="0.005",route="/v1/health"}' in text
    assert 'cohop_solve_duration_seconds_count{kind="plan",status="feasible"} 1.0' in text \
        or 'cohop_solve_duration_seconds_count{kind="plan",status="optimal"} 1.0' in text
    assert "cohop_solves_in_progress 0.0" in text


def test_busy_solver_answers_503_with_retry_after():
    app = create_app({"TESTING": True, "COHOP_MAX_CONCURRENT_SOLVES": 1})
    from cohop.api.solver_runner import slots

    held = slots(app)
    assert held.try_acquire()  # a solve is running
    body = copy.deepcopy(samples.load("water_works"))
    resp = app.test_client().post("/v1/plans", json=body)
    assert resp.status_code == 503 and resp.headers["Retry-After"] == "5"
    assert resp.json["type"] == "urn:cohop:problem:solver-busy"
    # evaluations are not held back by a running solve
    assert app.test_client().post("/v1/assessments", json=samples.load("water_works")).status_code == 200
    held.release()
    text = app.test_client().get("/metrics").get_data(as_text=True)
    assert 'cohop_rejections_total{reason="solver busy"} 1.0' in text


def test_access_log_is_json_with_request_id_and_no_secrets(caplog):
    app = create_app({"TESTING": True, "COHOP_TOKENS": TOKENS})
    secret_body = copy.deepcopy(samples.load("water_works"))
    with caplog.at_level(logging.INFO, logger="cohop.access"):
        resp = app.test_client().post("/v1/assessments", json=secret_body, headers={
            "Authorization": f"Bearer {TOKENS[0]}", "X-Request-Id": "plant-42.a"})
    assert resp.headers["X-Request-Id"] == "plant-42.a"
    records = [r for r in caplog.records if r.name == "cohop.access"]
    assert records and records[-1].request_id == "plant-42.a" and records[-1].status == 200
    from cohop.api.logs import JsonFormatter

    line = JsonFormatter().format(records[-1])
    parsed = json.loads(line)
    assert parsed["route"] == "/v1/assessments" and parsed["request_id"] == "plant-42.a"
    everything = " ".join(JsonFormatter().format(r) for r in caplog.records)
    assert TOKENS[0] not in everything and "scada-backbone" not in everything


def test_bad_request_ids_are_replaced():
    resp = create_app({"TESTING": True}).test_client().get("/v1/health", headers={"X-Request-Id": "a b<script>"})
    assert resp.headers["X-Request-Id"] != "a b<script>" and len(resp.headers["X-Request-Id"]) == 32
