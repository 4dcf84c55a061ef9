"""Shared checks for problem-details answers, and mutations of request bodies."""

from __future__ import annotations

import json

PROBLEM_JSON = "application/problem+json"


def problem_body(resp, status: int, instance: str | None = None, type_: str | None = None) -> dict:
    """The response is an RFC 9457 problem-details body with this status (and instance and type, when
    given); returns it."""
    assert resp.status_code == status, resp.get_data(as_text=True)[:3000]
    assert resp.mimetype == PROBLEM_JSON
    body = json.loads(resp.get_data(as_text=True))
    assert body["status"] == status
    assert isinstance(body["title"], str) and body["title"]
    assert "type" in body and "instance" in body
    if instance is not None:
        assert body["instance"] == instance, body
    if type_ is not None:
        assert body["type"] == type_, body
    return body


def _parent(body, path):
    node = body
    for key in path[:-1]:
        node = node[key]
    return node


def set_at(path, value):
    """A mutation that sets body[path...] = value (path: keys and list indices)."""
    def mutate(body):
        _parent(body, path)[path[-1]] = value
    return mutate


def pop_at(path):
    """A mutation that deletes body[path...]."""
    def mutate(body):
        del _parent(body, path)[path[-1]]
    return mutate
