"""Answers of the in-process service to the samples, computed once per test session for charts and reports."""

from __future__ import annotations

import copy
import functools

from cohop import samples
from cohop.api import create_app

FAST_SEARCH = {"time_limit_s": 1, "sequence_packets": 1000}


@functools.lru_cache(maxsize=None)
def _client():
    return create_app({"TESTING": True}).test_client()


def _post(path: str, body: dict) -> dict:
    response = _client().post(path, json=body)
    assert response.status_code == 200, response.json
    return response.json


@functools.lru_cache(maxsize=None)
def assessed(sample: str = "container_terminal", detail: str = "source") -> tuple[dict, dict]:
    """(request body, answer) of an assessment."""
    body = copy.deepcopy(samples.load(sample))
    body["detail"] = detail
    return body, _post("/v1/assessments", body)


@functools.lru_cache(maxsize=None)
def planned(sample: str = "water_works") -> tuple[dict, dict]:
    body = copy.deepcopy(samples.load(sample))
    body.update(detail="channel", search=FAST_SEARCH, baselines=["all"])
    return body, _post("/v1/plans", body)


@functools.lru_cache(maxsize=None)
def replanned() -> tuple[dict, dict]:
    body = copy.deepcopy(samples.load("water_works_replan"))
    body.update(detail="channel", search=FAST_SEARCH)
    return body, _post("/v1/replans", body)


@functools.lru_cache(maxsize=None)
def replan_report() -> str:
    """The re-plan sample's HTML report (charts included), rendered once."""
    from cohop.report import render_report

    return render_report(*replanned())
