"""In-process: the body read once with its cap (413 chunked or not, 408, 400), readiness while draining, and
the OpenAPI document's security scheme and /metrics."""

import io
import json

import pytest

from cohop import samples
from cohop.api import create_app, lifecycle
from cohop.api.body import ClientTimeout
from tests.problems import problem_body

CAP = 16 * 1024


@pytest.fixture(scope="module")
def client():
    return create_app({"TESTING": True, "COHOP_MAX_BODY_BYTES": CAP}).test_client()


def _padded_sample(size: int) -> bytes:
    """The water-works assessment, padded with trailing spaces (still valid JSON) to exactly `size` bytes."""
    raw = json.dumps(samples.load("water_works")).encode()
    assert len(raw) <= size
    return raw + b" " * (size - len(raw))


def _chunked(client, data, stream=None):
    """A chunked body as a server delivers it: dechunked, no length, `wsgi.input_terminated`."""
    return client.post("/v1/assessments", headers={"Content-Type": "application/json", "Transfer-Encoding": "chunked"},
                       environ_overrides={"wsgi.input": stream or io.BytesIO(data), "wsgi.input_terminated": True})


def _announced(client, stream, length: int):
    """A body whose Content-Length says `length`, whatever the stream holds."""
    return client.post("/v1/assessments", headers={"Content-Type": "application/json"},
                       environ_overrides={"wsgi.input": stream, "CONTENT_LENGTH": str(length)})


class Stalled(io.RawIOBase):
    """A body stream that gives some bytes, then fails the way a stalled or broken connection does."""

    def __init__(self, error: Exception):
        self.error, self.sent = error, False

    def readable(self):
        return True

    def read(self, size=-1):
        if not self.sent:
            self.sent = True
            return b'{"site": '
        raise self.error


class Unreadable(io.RawIOBase):
    def read(self, size=-1):
        raise AssertionError("the body was read although its Content-Length is over the cap")


def test_chunked_body_at_the_cap_is_read_and_one_byte_over_is_413(client):
    assert _chunked(client, _padded_sample(CAP)).status_code == 200
    body = problem_body(_chunked(client, _padded_sample(CAP + 1)), 413, "/v1/assessments")
    assert str(CAP) in body["detail"]


def test_content_length_over_the_cap_is_413_before_reading(client):
    problem_body(_announced(client, Unreadable(), CAP + 1), 413)
    assert client.post("/v1/assessments", data=_padded_sample(CAP), content_type="application/json").status_code == 200


@pytest.mark.parametrize("error", [TimeoutError("timed out"), ClientTimeout("no data for 10 s")])
def test_a_stalled_body_is_408(client, error):
    body = problem_body(_chunked(client, b"", Stalled(error)), 408, "/v1/assessments")
    assert "COHOP_CLIENT_TIMEOUT_S" in body["detail"]


def test_an_unreadable_or_short_body_is_400(client):
    body = problem_body(_chunked(client, b"", Stalled(ValueError("Invalid chunk size"))), 400)
    assert "could not be read" in body["detail"]
    short = _announced(client, io.BytesIO(b'{"site": {}}'), 100)
    assert "12 of the 100 bytes" in problem_body(short, 400)["detail"]


def test_readiness_answers_503_problem_while_draining(client):
    assert client.get("/v1/ready").json["status"] == "ready"
    lifecycle.mark_draining()
    try:
        body = problem_body(client.get("/v1/ready"), 503, "/v1/ready", "urn:cohop:problem:draining")
        assert body["state"] == "draining" and body["max_concurrent_solves"] == 1
        assert client.get("/v1/health").status_code == 200  # liveness is unaffected
    finally:
        lifecycle.clear_draining()
    assert client.get("/v1/ready").status_code == 200


def test_openapi_declares_bearer_auth_where_tokens_are_needed(client):
    spec = client.get("/openapi.json").json
    assert spec["components"]["securitySchemes"]["bearerAuth"] == {
        "type": "http", "scheme": "bearer", "description": spec["components"]["securitySchemes"]["bearerAuth"][
            "description"]}
    for path, item in spec["paths"].items():
        for method, op in item.items():
            if method == "parameters":
                continue
            if path in ("/v1/health", "/v1/ready"):
                assert op["security"] == [] and "401" not in op["responses"], path
            else:
                assert op["security"] == [{"bearerAuth": []}], (path, method)
                assert op["responses"]["401"] == {"$ref": "#/components/responses/BEARER_REQUIRED"}
    challenge = spec["components"]["responses"]["BEARER_REQUIRED"]
    assert "WWW-Authenticate" in challenge["headers"] and "application/problem+json" in challenge["content"]


def test_openapi_documents_metrics(client):
    op = create_app({"TESTING": True}).test_client().get("/openapi.json").json["paths"]["/metrics"]["get"]
    assert "text/plain" in op["responses"]["200"]["content"] and op["security"] == [{"bearerAuth": []}]
    public = create_app({"TESTING": True, "COHOP_METRICS_PUBLIC": True}).test_client().get("/openapi.json").json
    assert public["paths"]["/metrics"]["get"]["security"] == []
    assert client.get("/metrics").mimetype == "text/plain"
