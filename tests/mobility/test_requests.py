"""Moving systems over HTTP: the request schema's rules with their JSON pointers, bounds, and the sample."""

from __future__ import annotations

import pytest

from cohop import limits
from cohop.api.app import create_app
from cohop.api.schemas.assessment import AssessmentResponseSchema
from cohop.assess import assess_site
from cohop.errors import SiteError
from cohop.jobs.answers import assessment_answer
from cohop.prepare import prepare_site
from cohop.site_rules import load_site
from tests.answer_keys import missing_keys
from tests.api.conftest import load_sample
from tests.mobility.helpers import at, moving_site
from tests.problems import problem_body

ASSESSMENTS = "/v1/assessments"


@pytest.fixture(scope="module")
def client():
    return create_app({"TESTING": True}).test_client()


def _pointers(resp) -> dict[str, str]:
    body = problem_body(resp, 422)
    return {e["pointer"]: e["detail"] for e in body["errors"]}


def test_position_and_positions_together_are_refused_with_a_pointer(client):
    body = {"site": moving_site([at(0), at(10)], at(100))}
    body["site"]["systems"][0]["position"] = at(5)
    errors = _pointers(client.post(ASSESSMENTS, json=body))
    assert "at most one of position, positions and area" in errors["/site/systems/0/positions"]


def test_positions_and_area_together_point_at_area(client):
    body = {"site": moving_site([at(0), at(10)], at(100))}
    body["site"]["systems"][0]["area"] = {"x_min_m": 0, "x_max_m": 10, "y_min_m": 0, "y_max_m": 10, "step_m": 5}
    assert "/site/systems/0/area" in _pointers(client.post(ASSESSMENTS, json=body))


@pytest.mark.parametrize("area, pointer", [
    ({"x_min_m": 10, "x_max_m": 0, "y_min_m": 0, "y_max_m": 10, "step_m": 5}, "/site/systems/0/area/x_max_m"),
    # 0..100 every 1 m: 101 x 101 points, above MAX_AREA_POINTS
    ({"x_min_m": 0, "x_max_m": 100, "y_min_m": 0, "y_max_m": 100, "step_m": 1}, "/site/systems/0/area/step_m"),
    ({"x_min_m": 0, "x_max_m": 10, "y_min_m": 0, "y_max_m": 10, "step_m": 0.0}, "/site/systems/0/area/step_m"),
    ({"x_min_m": 0, "x_max_m": 10, "y_min_m": 0, "y_max_m": 10}, "/site/systems/0/area/step_m"),
])
def test_bad_areas_point_at_their_field(client, area, pointer):
    body = {"site": moving_site([at(0)], at(100))}
    crane = body["site"]["systems"][0]
    crane.pop("positions")
    crane["area"] = area
    assert pointer in _pointers(client.post(ASSESSMENTS, json=body))


def test_area_cap_is_the_documented_one():
    assert 101 * 101 > limits.MAX_AREA_POINTS >= 16 * 16


def test_too_many_positions_and_an_unknown_policy(client):
    body = {"site": moving_site([at(float(i)) for i in range(limits.MAX_POSITIONS + 1)], at(100))}
    body["site"]["mobility_policy"] = "average"
    errors = _pointers(client.post(ASSESSMENTS, json=body))
    assert "/site/systems/0/positions" in errors
    assert "/site/mobility_policy" in errors


def test_sampled_positions_cap_across_the_site(client):
    # three systems of 16 x 16 = 256 area points each: 768 sampled positions, above MAX_SAMPLED_POSITIONS
    body = {"site": moving_site([at(0)], at(100))}
    template = body["site"]["systems"][0]
    template.pop("positions")
    systems = []
    for i in range(3):
        s = dict(template, id=f"v{i}")
        s["area"] = {"x_min_m": 0, "x_max_m": 150, "y_min_m": 200 * i, "y_max_m": 200 * i + 150, "step_m": 10}
        systems.append(s)
    body["site"]["systems"] = systems
    assert 3 * 16 * 16 > limits.MAX_SAMPLED_POSITIONS
    errors = _pointers(client.post(ASSESSMENTS, json=body))
    assert "sampled positions" in errors["/site/systems"]


def test_load_site_checks_the_same_rules():
    body = moving_site([at(0), at(10)], at(100))
    body["systems"][0]["position"] = at(5)
    with pytest.raises(SiteError, match="at most one of position"):
        load_site(body)


def test_the_sample_crane_moves_and_its_worst_position_is_named(client):
    body = load_sample("container_terminal.json")
    resp = client.post(ASSESSMENTS, json=body)
    assert resp.status_code == 200, resp.get_data(as_text=True)[:2000]
    answer = resp.get_json()
    crane = next(s for s in answer["systems"] if s["id"] == "sts-1")
    sent = next(s for s in body["site"]["systems"] if s["id"] == "sts-1")["positions"]
    m = crane["mobility"]
    assert m["policy"] == "worst" and m["positions_sampled"] == len(sent) > 1 and m["mean"] is None
    worst = m["worst_position"]
    assert {"x_m": worst["position"]["x_m"], "y_m": worst["position"]["y_m"]} == sent[worst["index"]]
    assert worst["collision_probability"] <= crane["per_hop"]["collision_probability"] + 1e-15
    assert any("worst position pair" in a for a in answer["assumptions"])
    assert missing_keys(AssessmentResponseSchema(), answer) == []


def test_mean_policy_in_the_answer(client):
    body = load_sample("container_terminal.json")
    body["site"]["mobility_policy"] = "mean"
    answer = client.post(ASSESSMENTS, json=body).get_json()
    for s in answer["systems"]:
        m = s["mobility"]
        assert m["policy"] == "mean"
        assert m["mean"]["collision_probability"] <= m["worst_position"]["collision_probability"] + 1e-15


def test_the_sample_through_load_site():
    body = load_sample("container_terminal.json")
    answer = assessment_answer(assess_site(prepare_site(load_site(body["site"]))), caution=False)
    crane = answer.systems[0].mobility
    assert crane.id == "sts-1" and crane.positions_sampled == 5 and crane.worst is not None


def test_a_plan_names_the_moving_crane_worst_position(client):
    # The sample as a plan request (the site and a short search): planning uses the worst-case coupling, and
    # the plan's assessment carries the crane's mobility block like an assessment does.
    body = {"site": load_sample("container_terminal.json")["site"], "search": {"time_limit_s": 0.5, "seed": 0}}
    resp = client.post("/v1/plans", json=body)
    assert resp.status_code == 200, resp.get_data(as_text=True)[:2000]
    answer = resp.get_json()["assessment"]
    crane = next(s for s in answer["systems"] if s["id"] == "sts-1")
    worst = crane["mobility"]["worst_position"]
    assert worst["index"] in range(5)
    assert worst["collision_probability"] <= crane["per_hop"]["collision_probability"] + 1e-15
    assert any("worst position pair" in a for a in answer["assumptions"])


def test_extreme_areas_are_counted_not_built(client):
    # The widest area the coordinate bounds allow at the finest step: about 4e14 points, refused by
    # arithmetic (physics.geometry.axis_sample_count) before any point is made.
    body = {"site": moving_site([at(0)], at(100))}
    crane = body["site"]["systems"][0]
    crane.pop("positions")
    lo, hi = limits.COORDINATE_M.minimum, limits.COORDINATE_M.maximum
    crane["area"] = {"x_min_m": lo, "x_max_m": hi, "y_min_m": lo, "y_max_m": hi, "step_m": limits.AREA_STEP_M.minimum}
    assert "grid points" in _pointers(client.post(ASSESSMENTS, json=body))["/site/systems/0/area/step_m"]


def test_positions_at_the_coordinate_bounds_and_on_top_of_each_other(client):
    # Opposite corners of the coordinate range, and a position on the source itself (models use at least 1 m):
    # finite figures, and the worst position is the one on the source.
    lo, hi = limits.COORDINATE_M.minimum, limits.COORDINATE_M.maximum
    body = {"site": moving_site([at(lo, lo), at(hi, hi), at(100)], at(100), policy="mean")}
    resp = client.post(ASSESSMENTS, json=body)
    assert resp.status_code == 200, resp.get_data(as_text=True)[:2000]
    m = resp.get_json()["systems"][0]["mobility"]
    assert m["positions_sampled"] == 3 and m["worst_position"]["index"] == 2
    assert 0.0 <= m["mean"]["collision_probability"] <= m["worst_position"]["collision_probability"] <= 1.0


def test_an_area_reports_its_sampled_count(client):
    body = {"site": moving_site([at(0)], at(100))}
    crane = body["site"]["systems"][0]
    crane.pop("positions")
    crane["area"] = {"x_min_m": 0, "x_max_m": 75, "y_min_m": 0, "y_max_m": 20, "step_m": 25}  # 4 x 2 points
    m = client.post(ASSESSMENTS, json=body).get_json()["systems"][0]["mobility"]
    assert m["positions_sampled"] == 8
    # x = 75 is 25 m from the source: excess 40.9 - 20 log10(25) = 12.9 dB > 11 dB, so the 1 MHz neighbours
    # are harmed too (tests/mobility/test_policy.py); at 50 m and beyond co-channel only. First such point: y = 0.
    assert m["worst_position"]["index"] == 3
    assert m["worst_position"]["position"] == {"x_m": 75.0, "y_m": 0.0, "floor": 0}


def test_a_survey_beside_a_moving_system(client):
    # Survey-derived interferers carry a level for every system (given levels): they hold at every position,
    # while the source's coupling still follows the crane.
    body = {"site": moving_site([at(0), at(60), at(30), at(90)], at(120))}
    freqs = [2402e6 + 1e5 * i for i in range(190)]  # every 100 kHz over the grid; a carrier near 2405 MHz
    levels = [-40.0 if abs(f - 2405e6) < 3e5 else -120.0 for f in freqs]
    body["site"]["surveys"] = [{"id": "walk", "applies_to": ["crane"], "frequencies_hz": freqs,
                                "levels_dbm": levels, "resolution_bandwidth_hz": 1e5}]
    resp = client.post(ASSESSMENTS, json=body)
    assert resp.status_code == 200, resp.get_data(as_text=True)[:2000]
    answer = resp.get_json()
    assert answer["derived_interferers"]
    m = answer["systems"][0]["mobility"]
    assert m["positions_matter"] and m["worst_position"]["index"] == 3
    assert m["worst_position"]["collision_probability"] <= answer["systems"][0]["per_hop"]["collision_probability"]
