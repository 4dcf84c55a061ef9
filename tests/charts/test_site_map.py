"""Site map: every harmful pair between placed ends drawn, nothing else; labels inside the plot, none overlapping."""

from cohop import charts
from cohop.charts import data
from tests.charts.answers import assessed, replanned
from tests.charts.test_channel_map import _by_gid, _texts_overlap


def _expected_pairs(site: dict, answer: dict) -> set[str]:
    placed = {i["id"] for i in site["systems"] + site.get("interferers", [])
              if i.get("position") or i.get("positions") or i.get("area")}  # a moving system is placed too
    return {f"{src['id']}->{s['id']}" for s in answer.get("assessment", answer)["systems"]
            for src in s["sources"] if src["collision_probability"] >= data.HARMFUL_PAIR_MIN
            and src["id"] in placed and s["id"] in placed}


def test_harmful_pairs_are_the_sources_above_the_threshold():
    body, answer = assessed()
    fig = charts.site_map(body["site"], answer)
    drawn = set(_by_gid(fig, "pair:"))
    assert drawn == _expected_pairs(body["site"], answer)
    assert drawn  # the container terminal has harmful pairs; an empty map would pass the line above
    assert any(src.startswith("wifi") for src in (p.split("->")[0] for p in drawn))  # interferers as sources


def test_every_placed_item_is_marked_and_labelled_inside_the_plot_without_overlap():
    body, answer = replanned()
    site = body["site"]
    fig = charts.site_map(site, answer)
    placed = [i["id"] for i in site["systems"] + site["interferers"]
              if i.get("position") or i.get("positions") or i.get("area")]
    assert set(_by_gid(fig, "system:")) | set(_by_gid(fig, "interferer:")) == set(placed)
    labels = _by_gid(fig, "label:")
    assert {k.removeprefix("NEW ") for k in labels} == set(placed)
    assert "NEW clarifier-gateway" in labels  # the re-plan's new interferer
    assert _texts_overlap(fig) == []
    frame = fig.axes[0].get_window_extent()
    for text in labels.values():
        box = text.get_window_extent()
        assert frame.x0 <= box.x0 and box.x1 <= frame.x1 and frame.y0 <= box.y0 and box.y1 <= frame.y1
    # the gateway given only by levels has no position: said under the map, not drawn
    assert "no position given: farm-gateway" in fig.axes[0].get_title(loc="left")


def test_charts_leave_no_figure_open(tmp_path):
    """A server draws charts for every report: no figure may stay in pyplot's registry after it (matplotlib's
    documentation, "Embed in a web application server": use Figure, not pyplot)."""
    import matplotlib.pyplot as plt

    body, answer = assessed()
    before = len(plt.get_fignums())
    for _ in range(3):
        charts.site_map(body["site"], answer, tmp_path / "map.png")
        charts.channel_map(body["site"], answer, tmp_path / "channels.svg")
    assert len(plt.get_fignums()) == before
    assert (tmp_path / "map.png").stat().st_size > 0 and (tmp_path / "channels.svg").stat().st_size > 0


def test_a_moving_system_is_drawn_where_it_is_worst_off_with_the_ground_it_covers():
    """The container terminal's quay crane (sts-1) gives five positions: its marker sits at the answer's worst
    position, a dotted track runs through its positions, and it is not listed as unplaced."""
    body, answer = assessed()
    crane = next(s for s in body["site"]["systems"] if s["id"] == "sts-1")
    worst = next(s for s in answer["systems"] if s["id"] == "sts-1")["mobility"]["worst_position"]["position"]
    fig = charts.site_map(body["site"], answer)
    marker = _by_gid(fig, "system:")["sts-1"]
    assert (marker.get_xdata()[0], marker.get_ydata()[0]) == (worst["x_m"], worst["y_m"])
    track = _by_gid(fig, "track:")["sts-1"]
    assert list(zip(track.get_xdata(), track.get_ydata())) == [(p["x_m"], p["y_m"]) for p in crane["positions"]]
    assert "sts-1" not in fig.axes[0].get_title()
