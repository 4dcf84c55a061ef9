"""Traffic requirements through the HTTP API: field checks with pointers, the figures in the answer with
their caution and model, recomputable from the answer, and the text table."""

from __future__ import annotations

import numpy as np
import pytest

from cohop.cli_text import traffic_lines
from tests.api.conftest import ASSESSMENTS, load_sample

CRANE = "sludge-crane"


@pytest.fixture(scope="module")
def answer():
    from cohop.api.app import create_app

    body = load_sample("water_works.json")
    r = create_app({"TESTING": True}).test_client().post(ASSESSMENTS, json={"site": body["site"]})
    assert r.status_code == 200, r.get_json()
    return r.get_json()


def _one(answer, sid):
    return next(t for t in answer["traffic"] if t["id"] == sid)


def test_every_traffic_figure_carries_the_safety_caution_and_its_model(answer):
    ids = {t["id"] for t in answer["traffic"]}
    assert ids == {"sludge-crane", "filter-sensors"}  # the systems of the sample that give traffic
    for t in answer["traffic"]:
        assert "safety assessment" in t["caution"] and "cableless control of machinery" in t["caution"]
        assert t["model"] and t["assumptions"]
    crane = _one(answer, CRANE)
    assert crane["stops_per_hour"]["value"] > 0  # computed, never a simulated 0
    assert crane["watchdog_messages"] == 5


def test_figures_recompute_from_the_answer(answer):
    # P(deadline met) = sum_k p_k clip((deadline - c_k) / dwell, 0, 1); stops = runs reaching m per hour
    t = _one(answer, CRANE)
    w, c, dwell = np.array(t["delivered_at_attempt"]), np.array(t["attempt_latency_s"]), t["dwell_s"]
    met = float(np.sum(w * np.clip((t["requirement"]["deadline_s"] - c) / dwell, 0, 1)))
    assert t["deadline"]["value"] == pytest.approx(met, abs=1e-12)
    assert t["stops_per_hour"]["value"] == pytest.approx(
        t["lost_message_runs_per_hour"][t["watchdog_messages"] - 1], rel=1e-12)
    assert t["meets_deadline"] == (t["deadline"]["interval"][0] >= t["requirement"]["deadline_probability"])


def test_text_table_shows_the_figures(answer):
    text = "\n".join(traffic_lines(answer["traffic"]))
    assert "sludge-crane" in text and "stops/h" in text and "safety assessment" in text


@pytest.mark.parametrize("traffic,pointer_field", [
    ({"message_interval_s": 0.1, "watchdog_s": 0.05}, "watchdog_s"),
    ({"message_interval_s": 0.1, "deadline_probability": 0.99}, "deadline_probability"),
    ({"message_interval_s": 0.1, "max_stops_per_hour": 1.0}, "max_stops_per_hour"),
    ({"message_interval_s": 0.001, "watchdog_s": 3000.0}, "watchdog_s"),
    ({"message_interval_s": "0.1"}, "message_interval_s"),
    ({"message_interval_s": 0.1, "deadline_s": -1.0}, "deadline_s"),
    ({"deadline_s": 1.0}, "message_interval_s"),
])
def test_bad_traffic_is_refused_with_its_pointer(traffic, pointer_field):
    from cohop.api.app import create_app

    body = load_sample("water_works.json")
    body["site"]["systems"][0]["traffic"] = traffic
    r = create_app({"TESTING": True}).test_client().post(ASSESSMENTS, json={"site": body["site"]})
    assert r.status_code == 422
    pointers = [e["pointer"] for e in r.get_json()["errors"]]
    assert f"/site/systems/0/traffic/{pointer_field}" in pointers, pointers


def test_a_plan_rechecks_its_traffic_along_its_own_sequences():
    from cohop.api.app import create_app
    from tests.planning.helpers import tiny_site

    body = tiny_site(n_systems=3, n_channels=20)
    body["systems"][0]["traffic"] = {"message_interval_s": 0.05, "deadline_s": 0.05, "deadline_probability": 0.99,
                                     "watchdog_s": 0.2, "max_stops_per_hour": 1e-3}
    r = create_app({"TESTING": True}).test_client().post(
        "/v1/plans", json={"site": body, "search": {"time_limit_s": 1.0},
                           "requirements": {"systems": [{"system": f"s{i}", "min_channels": 6, "max_channels": 6}
                                                        for i in range(3)]}})
    assert r.status_code == 200, r.get_json()
    answer = r.get_json()
    (t,) = answer["assessment"]["traffic"]
    assert t["id"] == "s0" and t["order_origin"] == "planned"
    assert t["order_length"] == 6  # the plan's own order over its 6 channels
    clears = t["stops_clearance"] is None or t["stops_clearance"] >= 1
    assert t["meets_stops"] == clears
    assert t["collision_ceiling"] > 0 and "safety assessment" in t["caution"]
    assert t["ceiling_binds"] == (t["collision_probability"] >= 0.99 * t["collision_ceiling"])
    # the traffic figures read the same per-hop collision as the plan's assessment
    assert t["collision_probability"] == pytest.approx(
        answer["assessment"]["systems"][0]["per_hop"]["collision_probability"], rel=1e-9)


def test_a_ceiling_the_plan_cannot_meet_is_reported_as_not_met_not_as_binding():
    """The open-pit sample's shovel remote asks for 99.9 % within 0.2 s, which its slope-radar neighbour does
    not allow: the plan's binding list says NOT met with the estimate and the ceiling (it said only "loss
    ceiling"), and the re-checked traffic figure agrees that the deadline is missed."""
    from cohop.api.app import create_app

    body = load_sample("open_pit_mine.json")
    r = create_app({"TESTING": True}).test_client().post(
        "/v1/plans", json={"site": body["site"], "search": {"time_limit_s": 1.0, "seed": 1}})
    assert r.status_code == 200, r.get_json()
    answer = r.get_json()
    shovel = next(b for b in answer["solver"]["binding"] if b.startswith("shovel-remote: loss ceiling"))
    t = _one(answer["assessment"], "shovel-remote")
    system = next(s for s in answer["assessment"]["systems"] if s["id"] == "shovel-remote")
    ceiling, estimate = t["collision_ceiling"], system["per_hop"]["collision_probability"]
    assert "NOT met" in shovel and f"{ceiling:.3g}" in shovel
    assert t["meets_deadline"] is False and estimate > ceiling
