"""Channel maps: files written and readable, sizes as asked, one row per system (artists, not pixels)."""

import copy
import xml.etree.ElementTree as ET

import matplotlib.image
import pytest

from cohop import charts, samples
from cohop.api import create_app


@pytest.fixture(scope="module")
def answers():
    client = create_app({"TESTING": True}).test_client()
    site = copy.deepcopy(samples.load("container_terminal_eu2400"))
    assessed = client.post("/v1/assessments", json=site).json
    replan_body = copy.deepcopy(samples.load("water_works_replan"))
    replan_body["search"] = {"time_limit_s": 1, "sequence_packets": 1000}
    replanned = client.post("/v1/replans", json=replan_body).json
    return site, assessed, replan_body, replanned


def _row_labels(fig) -> list[str]:
    """The channel map's row labels, top to bottom, as drawn on its first axes."""
    return [t.get_text() for t in fig.axes[0].get_yticklabels()]


def test_png_written_at_the_requested_size(answers, tmp_path):
    site, assessed, _, _ = answers
    path = tmp_path / "map.png"
    fig = charts.channel_map(site["site"], assessed, path, width_in=8.0, height_in=5.0, dpi=100)
    image = matplotlib.image.imread(path)
    assert image.shape[:2] == (500, 800)
    assert _row_labels(fig) == [s["id"] for s in site["site"]["systems"]]  # one row per system


def test_svg_is_readable(answers, tmp_path):
    site, assessed, _, _ = answers
    path = tmp_path / "map.svg"
    charts.channel_map(site["site"], assessed, path, width_in=6.0, height_in=4.0)
    root = ET.parse(path).getroot()
    assert root.tag.endswith("svg")
    assert root.attrib["width"].startswith("432")  # 6 in at 72 pt per inch


def test_replan_rows_show_before_and_after(answers, tmp_path):
    _, _, body, replanned = answers
    fig = charts.channel_map(body["site"], replanned, tmp_path / "replan.png")
    existing = [d["id"] for d in replanned["diff"] if d["status"] != "new system"]
    assert _row_labels(fig) == [label for sid in existing for label in (f"{sid} now", f"{sid} new")]
    # dropped channels are crossed out: one marker line per system that dropped any
    crosses = [line for line in fig.axes[0].get_lines() if line.get_marker() == "x"]
    assert len(crosses) == sum(1 for d in replanned["diff"] if d["dropped"])
    # the survey trace has its own panel
    assert len(fig.axes) == 3


def test_missing_matplotlib_says_how_to_add_it(monkeypatch):
    import builtins

    real = builtins.__import__

    def no_matplotlib(name, *args, **kwargs):
        if name.startswith("matplotlib"):
            raise ImportError("no matplotlib")
        return real(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", no_matplotlib)
    with pytest.raises(charts.PlotUnavailable, match=r"cohop\[plot\]"):
        charts.channel_map({"grid": {}, "systems": []}, {"systems": []})
