"""Extreme but admitted values: the assessment never answers 5xx and every answer is strict JSON.

Every numeric field of a site is drawn at, one ulp inside, or next to a bound of `cohop.limits`
(tests/hostile/extremes.py). A 422 is allowed (a draw can break a cross-field rule or a work cap); a
5xx, NaN or Infinity is not. The deterministic tests below check that the bounds themselves are
admitted, so the property is not met by refusing everything.
"""

from __future__ import annotations

import json

import pytest
from hypothesis import HealthCheck, given, settings

from cohop import limits
from cohop.api.app import create_app
from tests.hostile import extremes
from tests.hostile.strict import strict_loads

APP = create_app({"TESTING": True, "COHOP_MAX_SIMULATED_ATTEMPTS": 10_000})
CLIENT = APP.test_client()


def _post(body):
    return CLIENT.post("/v1/assessments", data=json.dumps(body, allow_nan=False), content_type="application/json")


@settings(max_examples=60, deadline=None, suppress_health_check=list(HealthCheck))
@given(extremes.assessment())
def test_extreme_admitted_values_answer_strict_json_and_no_5xx(body):
    resp = _post(body)
    assert resp.status_code in (200, 422), resp.get_data(as_text=True)[:2000]
    answer = strict_loads(resp.get_data(as_text=True))
    if resp.status_code == 422:
        assert resp.mimetype == "application/problem+json" and answer["errors"]


@pytest.mark.parametrize("end", ["minimum", "maximum"])
@pytest.mark.parametrize("detail", ["system", "source"])
def test_every_number_at_its_bound_is_admitted_and_answered(end, detail):
    body = {"site": extremes.corner_site(end), "detail": detail,
            "simulation": {"trials_per_system": limits.TRIALS_PER_SYSTEM.minimum,
                           "seed": getattr(limits.SIMULATION_SEED, end)}}
    resp = _post(body)
    assert resp.status_code == 200, resp.get_data(as_text=True)[:3000]
    answer = strict_loads(resp.get_data(as_text=True))
    assert [s["id"] for s in answer["systems"]] == ["a", "b"]
    assert answer["sequences"] is not None and answer["simulation"] is not None
