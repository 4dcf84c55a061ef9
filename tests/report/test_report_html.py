"""The HTML report's content: every part the issue lists, taken from the answer; self-contained; escaped."""

import copy
import html.parser
import re

import pytest

from cohop.charts.data import pct
from cohop.report import render_report
from cohop.report.sections import REPORT_CAUTION, ranges
from tests.charts.answers import assessed, planned, replan_report, replanned


class _Page(html.parser.HTMLParser):
    """Text, image sources, links and element ids of a page; fails on tags left open."""

    def __init__(self):
        super().__init__()
        self.text, self.sources, self.links, self.ids, self.stack, self.scripts = [], [], [], set(), [], 0

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        self.ids.add(attrs.get("id"))
        if tag == "img":
            self.sources.append(attrs["src"])
            return
        if tag in ("meta", "br"):
            return
        self.scripts += tag == "script"
        self.links += [attrs["href"]] if "href" in attrs else []
        self.stack.append(tag)

    def handle_endtag(self, tag):
        assert self.stack.pop() == tag

    def handle_data(self, data):
        self.text.append(data)


def _parse(document: str) -> tuple[_Page, str]:
    page = _Page()
    page.feed(document)
    assert page.stack == []
    return page, re.sub(r"\s+", " ", " ".join(page.text))


def test_a_plan_report_holds_every_part():
    body, answer = planned()
    page, text = _parse(render_report(body, answer))
    for caution in [REPORT_CAUTION, *answer["cautions"]]:
        assert caution in text
    for section in ("summary", "charts", "plan", "figures", "compliance", "baselines", "inputs", "assumptions"):
        assert section in page.ids
    for p in answer["plan"]:
        assert ranges(p["hop_set"]) in text  # the hop sets, as channel runs
    for s in answer["assessment"]["systems"]:
        assert pct(s["per_hop"]["collision_probability"]) in text
        assert pct(s["retries"]["residual_loss_probability"]) in text
        for finding in s["compliance"]["findings"]:
            assert finding["citation"] in text and finding["message"] in text
    for b in answer["baselines"]:
        assert b["name"] in text
    for assumption in answer["assessment"]["assumptions"]:
        assert assumption in text
    for system in body["site"]["systems"]:
        assert system["label"] in text  # the inputs


def test_self_contained_no_script_nothing_fetched():
    page, _ = _parse(replan_report())
    assert page.scripts == 0
    # channel map, site map, traffic (the water works states traffic requirements)
    assert len(page.sources) == 3 + 1 and all(s.startswith("data:image/png;base64,") for s in page.sources)
    assert all(link.startswith("#") for link in page.links)


def test_replan_report_lists_the_changes():
    _, answer = replanned()
    _, text = _parse(replan_report())
    for d in answer["diff"]:
        if d["dropped"]:
            assert ranges(d["dropped"]) in text
        if d["added"]:
            assert ranges(d["added"]) in text
    assert f"channel changes {answer['changes']['count']}" in text


def test_assessment_without_positions_or_channel_detail_has_the_channel_and_traffic_charts():
    body, answer = assessed("water_works", "system")
    body = copy.deepcopy(body)
    for item in body["site"]["systems"] + body["site"]["interferers"]:
        item.pop("position", None)
    page, text = _parse(render_report(body, answer))
    assert len(page.sources) == 2  # the channel map and the traffic chart; no dominant sources, no site map
    assert "No baselines were evaluated" in text


def test_text_from_the_request_is_escaped():
    body, answer = assessed()
    body = copy.deepcopy(body)
    body["site"]["name"] = "<script>alert(1)</script> & co"
    document = render_report(body, answer, charts=False)
    assert "<script>" not in document
    assert "&lt;script&gt;alert(1)&lt;/script&gt; &amp; co" in document


def test_without_matplotlib_the_report_says_how_to_get_charts(monkeypatch):
    import builtins

    real = builtins.__import__

    def no_matplotlib(name, *args, **kwargs):
        if name.startswith("matplotlib"):
            raise ImportError("no matplotlib")
        return real(name, *args, **kwargs)

    body, answer = assessed()
    monkeypatch.setattr(builtins, "__import__", no_matplotlib)
    page, text = _parse(render_report(body, answer))
    assert page.sources == [] and "cohop[plot]" in text


@pytest.mark.parametrize("channels, runs", [([], "none"), ([3], "3"), ([5, 0, 1, 2, 7, 8], "0-2, 5, 7-8")])
def test_channel_runs(channels, runs):
    assert ranges(channels) == runs


def test_the_traffic_section_and_chart_carry_each_system_with_requirements():
    body, answer = assessed()
    doc = render_report(body, answer)
    assert 'id="chart-traffic"' in doc or "chart-traffic" in doc
    section = doc[doc.index("Traffic: deadlines and watchdog stops"):]
    for t in answer["traffic"]:
        assert f"<td>{t['id']}</td>" in section
        if t.get("deadline_missed"):
            assert pct(t["deadline_missed"]["value"]) in section


def test_the_summary_gives_the_weighted_sum_as_a_number_not_a_percentage():
    """The priority-weighted sum over systems can exceed 1 (the container terminal's is about 0.7 to 3): it is
    not a probability and is not written as one."""
    body, answer = assessed()
    _, text = _parse(render_report(body, answer))
    total = answer["summary"]["weighted_collision_probability"]
    assert f"priority-weighted sum of per-hop hit probabilities {total:.4f}" in " ".join(text.split())
    assert pct(total) not in text.split("priority-weighted sum")[1][:60]
