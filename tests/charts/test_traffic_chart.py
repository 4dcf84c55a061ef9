"""Traffic chart: every figure drawn is the answer's own (deadline misses and watchdog stops with their
intervals and limits), coloured by whether the requirement is met."""

from __future__ import annotations

import copy

import matplotlib.colors
import pytest

from cohop import charts
from cohop.charts import traffic_panels as tc
from tests.charts.answers import assessed
from tests.charts.test_channel_map import _by_gid


def test_each_system_with_requirements_is_drawn_from_its_answer():
    body, answer = assessed()
    # the colours must follow the answer's own verdicts, both of them: a chart of one colour would pass the loop
    # below. The container terminal's verdicts are physics (with the fading-aware harm every system misses its
    # deadline), so a copy is given one of each (the first system met, the last missed) to see both colours drawn.
    answer = copy.deepcopy(answer)
    judged = [t for t in answer["traffic"] if t.get("meets_deadline") is not None]
    judged[0]["meets_deadline"], judged[-1]["meets_deadline"] = True, False
    fig = charts.traffic_chart(body["site"], answer)
    traffic = {t["id"]: t for t in answer["traffic"]}
    dots = _by_gid(fig, "miss:")
    assert set(dots) == {i for i, t in traffic.items() if t["requirement"].get("deadline_probability") is not None}
    for sid, dot in dots.items():
        t = traffic[sid]
        assert dot.get_xdata()[0] == max(t["deadline_missed"]["value"], tc.MISS_FLOOR)
        assert _by_gid(fig, "miss-limit:")[sid].get_xdata()[0] == pytest.approx(
            1 - t["requirement"]["deadline_probability"])
        colour = matplotlib.colors.to_hex(dot.get_color())
        assert colour == (tc.MET if t["meets_deadline"] else tc.NOT_MET)
    stops = _by_gid(fig, "stops:")
    for sid, dot in stops.items():
        assert dot.get_xdata()[0] == max(traffic[sid]["stops_per_hour"]["value"], tc.STOPS_FLOOR)
        low, high = _by_gid(fig, "stops-interval:")[sid].get_xdata()
        assert (low, high) == tuple(max(x, tc.STOPS_FLOOR) for x in traffic[sid]["stops_per_hour"]["interval"])
    assert {t["meets_deadline"] for t in traffic.values() if t.get("meets_deadline") is not None} == {True, False}


def test_an_answer_without_traffic_requirements_is_refused():
    body, answer = assessed()
    answer = copy.deepcopy(answer)
    answer["traffic"] = []
    with pytest.raises(ValueError, match="no system states"):
        charts.traffic_chart(body["site"], answer)
