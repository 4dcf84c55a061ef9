"""Shared fixtures for the HTTP API tests."""

from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest

from cohop.api.app import create_app
from tests.problems import problem_body

SAMPLES_DIR = Path(__file__).resolve().parents[2] / "sample_requests"
SAMPLE_FILES = sorted(p.name for p in SAMPLES_DIR.glob("*.json") if not p.stem.endswith("_replan"))
ASSESSMENTS = "/v1/assessments"

_CACHE: dict[str, dict] = {}


def load_sample(name: str = "water_works.json") -> dict:
    """A fresh deep copy of one sample request body."""
    if name not in _CACHE:
        _CACHE[name] = json.loads((SAMPLES_DIR / name).read_text())
    return copy.deepcopy(_CACHE[name])


@pytest.fixture
def app():
    return create_app({"TESTING": True})


@pytest.fixture
def client(app):
    return app.test_client()


@pytest.fixture
def sample():
    return load_sample()


def post_assessment(client, body=None, *, data=None, content_type="application/json"):
    """POST to /v1/assessments: `body` as JSON, or raw `data` text with `content_type`."""
    if data is None:
        data = json.dumps(body)
    return client.post(ASSESSMENTS, data=data, content_type=content_type)


@pytest.fixture
def post(client):
    def _post(body=None, **kwargs):
        return post_assessment(client, body, **kwargs)
    return _post


def assert_problem(resp, status: int) -> dict:
    """The response is an RFC 9457 problem-details body with this status; returns it."""
    return problem_body(resp, status)


def pointers(body: dict) -> list[str]:
    return [e["pointer"] for e in body.get("errors", [])]


def assert_pointer(resp, pointer: str, status: int = 422) -> dict:
    """A problem-details body whose `errors` name `pointer` exactly."""
    body = assert_problem(resp, status)
    for e in body.get("errors", []):
        assert set(e) >= {"pointer", "detail"} and e["detail"]
    assert pointer in pointers(body), body
    return body
