"""GET /openapi.json: a valid OpenAPI document that describes what the service answers."""

from __future__ import annotations

import pytest
from openapi_schema_validator import OAS30Validator
from openapi_spec_validator import validate

from cohop.api.app import create_app
from cohop.api.schemas.assessment import AssessmentResponseSchema
from tests.answer_keys import missing_keys
from tests.problems import PROBLEM_JSON

from .conftest import SAMPLE_FILES, load_sample, post_assessment

PROBLEM_REF = "#/components/schemas/Problem"
METHODS = ("get", "put", "post", "delete", "patch", "options", "head")
EXPECTED_PATHS = {"/v1/assessments", "/v1/plans", "/v1/profiles", "/v1/profiles/{profile_id}", "/v1/health"}


def _load_spec():
    resp = create_app({"TESTING": True}).test_client().get("/openapi.json")
    assert resp.status_code == 200
    return resp.get_json()


SPEC = _load_spec()


def _resolve(node):
    while "$ref" in node:
        parts = node["$ref"].lstrip("#/").split("/")
        node = SPEC
        for part in parts:
            node = node[part]
    return node


def _operations():
    for path, item in SPEC["paths"].items():
        for method in METHODS:
            if method in item:
                yield path, method, item[method]


def _error_responses():
    for path, method, op in _operations():
        for status, resp in op["responses"].items():
            if status == "default" or int(status) >= 400:
                yield path, method, status, resp


def _schema_validator(ref):
    return OAS30Validator({"$ref": ref, "components": SPEC["components"]})


@pytest.fixture
def spec(client):
    resp = client.get("/openapi.json")
    assert resp.status_code == 200
    assert resp.mimetype == "application/json"
    return resp.get_json()


def test_spec_is_valid_openapi(spec):
    assert spec["openapi"].startswith("3.")
    validate(spec)


def test_info_carries_version_and_cautions(spec, client):
    assert spec["info"]["title"] == "cohop"
    assert spec["info"]["version"] == client.get("/v1/health").get_json()["version"]
    description = spec["info"]["description"].lower()
    for words in ("planning estimate", "site survey", "regulat"):
        assert words in description


def test_every_endpoint_is_documented(spec):
    assert EXPECTED_PATHS <= set(spec["paths"])
    for path in ("/v1/assessments", "/v1/plans"):
        assert "post" in spec["paths"][path]
    for path in EXPECTED_PATHS - {"/v1/assessments", "/v1/plans"}:
        assert "get" in spec["paths"][path]


@pytest.mark.parametrize("path, method", [(p, m) for p, m, _ in _operations()])
def test_every_operation_documents_responses(path, method):
    op = SPEC["paths"][path][method]
    responses = op["responses"]
    success = [s for s in responses if s != "default" and 200 <= int(s) < 300]
    assert success, f"{method.upper()} {path} documents no success response"
    for status in success:
        resolved = _resolve(responses[status])
        assert resolved.get("description")
        media = "text/plain" if path == "/metrics" else "application/json"  # Prometheus exposition format
        assert media in resolved["content"]
        assert "schema" in resolved["content"][media]
    assert "default" in responses or any(int(s) >= 400 for s in responses if s != "default"), \
        f"{method.upper()} {path} documents no error response"
    assert op.get("summary")


def _extends_problem(ref: str) -> bool:
    """The Problem schema itself, or one carrying every Problem field (e.g. with conflicts added)."""
    if ref == PROBLEM_REF:
        return True
    name = ref.rsplit("/", 1)[-1]
    props = SPEC["components"]["schemas"].get(name, {}).get("properties", {})
    base = SPEC["components"]["schemas"]["Problem"]["properties"]
    return set(base) <= set(props)


def _documents_problem(resp) -> bool:
    resolved = _resolve(resp)
    content = resolved.get("content") or {}
    return PROBLEM_JSON in content and _extends_problem(content[PROBLEM_JSON].get("schema", {}).get("$ref", ""))


_ERRORS = list(_error_responses())
_BODY_ERRORS = {("/v1/assessments", "post", "400"), ("/v1/assessments", "post", "413"),
                ("/v1/assessments", "post", "415")}


@pytest.mark.parametrize("path, method, status", [(p, m, s) for p, m, s, _ in _ERRORS])
def test_error_responses_document_problem_details(path, method, status):
    resp = SPEC["paths"][path][method]["responses"][status]
    assert _documents_problem(resp), f"{method.upper()} {path} {status}: {_resolve(resp)}"


def test_body_error_responses_are_listed():
    """The statuses a bad body can cause are documented, not only the generic default."""
    listed = {(p, m, s) for p, m, s, _ in _ERRORS}
    assert _BODY_ERRORS <= listed
    assert ("/v1/assessments", "post", "422") in listed


def test_problem_schema_fields(spec):
    problem = spec["components"]["schemas"]["Problem"]
    assert {"type", "title", "status", "detail", "instance", "errors"} <= set(problem["properties"])
    assert problem["properties"]["status"]["type"] == "integer"
    field_error = _resolve(problem["properties"]["errors"]["items"])
    assert {"pointer", "detail"} <= set(field_error["properties"])


def test_assessment_request_body_documents_required_fields(spec):
    body = spec["paths"]["/v1/assessments"]["post"]["requestBody"]
    assert body["required"] is True
    request = _resolve(body["content"]["application/json"]["schema"])
    assert "site" in request["required"]
    assert {"site", "simulation", "detail"} <= set(request["properties"])
    assert request["properties"]["detail"]["enum"] == ["system", "channel", "source"]
    assert request.get("additionalProperties") is False
    site = _resolve(request["properties"]["site"])
    assert {"profile", "grid", "systems"} <= set(site["required"])
    assert site["properties"]["systems"]["minItems"] == 1
    system = _resolve(site["properties"]["systems"]["items"])
    assert {"id", "tx_power_dbm", "bandwidth_hz", "dwell_s", "packet_airtime_s", "rejection",
            "retry_limit"} <= set(system["required"])
    assert system["properties"]["retry_limit"]["type"] == "integer"
    assert system["properties"]["tx_power_dbm"]["type"] == "number"


@pytest.mark.parametrize("name", SAMPLE_FILES)
def test_samples_match_documented_request_schema(name):
    errors = list(_schema_validator("#/components/schemas/AssessmentRequest").iter_errors(load_sample(name)))
    assert not errors, [e.message for e in errors[:5]]


@pytest.mark.parametrize("detail", ["system", "channel", "source"])
def test_responses_match_documented_schema(client, detail):
    body = load_sample()
    body["detail"] = detail
    body["simulation"] = {"trials_per_system": 1000, "seed": 7}
    resp = post_assessment(client, body)
    assert resp.status_code == 200
    errors = list(_schema_validator("#/components/schemas/AssessmentResponse").iter_errors(resp.get_json()))
    assert not errors, [e.message for e in errors[:5]]
    assert missing_keys(AssessmentResponseSchema(), resp.get_json()) == []


def test_problem_bodies_match_documented_schema(client):
    resp = post_assessment(client, {"site": {"surprise": 1}})
    assert resp.status_code == 422
    errors = list(_schema_validator(PROBLEM_REF).iter_errors(resp.get_json(force=True)))
    assert not errors, [e.message for e in errors[:5]]
