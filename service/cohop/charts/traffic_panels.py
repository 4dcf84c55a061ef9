"""Traffic chart: for each system that states traffic requirements, how likely a message misses its deadline
and how often the link-loss watchdog stops the machine, beside the limits it was given.

Two panels on logarithmic axes, one row per system: the predicted figure as a dot with its interval as a
bar (the answer's `traffic[].deadline_missed` and `traffic[].stops_per_hour`), the requirement as a
vertical tick, green where it is met and red where not. Figures below the axis floor (the chain's exact
figures reach 1e-20 and less) sit on the floor with a left arrow and their value written beside. Works from
the request and answer JSON, like the other charts.
"""

from __future__ import annotations

from pathlib import Path

from cohop.charts import data
from cohop.charts._mpl import CAUTION, save, toolkit

LABEL_PT = 7.5
MET, NOT_MET, LIMIT = "#2a9d8f", "#d62828", "#2b2d42"
#: Axis floors: a deadline-miss probability and a stop rate below these are drawn on the floor.
MISS_FLOOR, STOPS_FLOOR = 1e-9, 1e-9


def rows(answer: dict) -> list[dict]:
    """One row per system with traffic figures: its id and, per panel, (value, interval, limit, met) or None."""
    out = []
    for t in data.assessment_of(answer).get("traffic") or []:
        req = t.get("requirement") or {}
        miss = stops = None
        if t.get("deadline_missed") is not None and req.get("deadline_probability") is not None:
            miss = (t["deadline_missed"]["value"], t["deadline_missed"]["interval"],
                    1.0 - req["deadline_probability"], t.get("meets_deadline"))
        if t.get("stops_per_hour") is not None and req.get("max_stops_per_hour") is not None:
            stops = (t["stops_per_hour"]["value"], t["stops_per_hour"]["interval"], req["max_stops_per_hour"],
                     t.get("meets_stops"))
        if miss or stops:
            out.append({"id": t["id"], "miss": miss, "stops": stops})
    return out


def _panel(ax, items, key: str, floor: float, title: str, unit: str) -> None:
    ax.set_xscale("log")
    for y, row in enumerate(items):
        figure = row[key]
        if figure is None:
            ax.text(floor, y, "  no requirement", va="center", fontsize=LABEL_PT, color="#777777")
            continue
        value, (lo, hi), limit, met = figure
        colour = MET if met else NOT_MET
        ax.plot([max(lo, floor), max(hi, floor)], [y, y], "-", color=colour, linewidth=3, alpha=0.45,
                gid=f"{key}-interval:{row['id']}")
        shown = max(value, floor)
        ax.plot([shown], [y], "<" if value < floor else "o", color=colour, markersize=6, gid=f"{key}:{row['id']}")
        if value < floor:
            ax.text(shown, y + 0.28, f" {value:.1e}", fontsize=LABEL_PT - 1, color=colour)
        ax.plot([limit], [y], "|", color=LIMIT, markersize=14, markeredgewidth=2, gid=f"{key}-limit:{row['id']}")
    ax.set_yticks(range(len(items)), [r["id"] for r in items], fontsize=LABEL_PT)
    ax.set_ylim(len(items) - 0.5, -0.5)
    ax.set_xlabel(unit, fontsize=LABEL_PT + 0.5)
    ax.set_title(title, fontsize=LABEL_PT + 1, loc="left")
    ax.tick_params(axis="x", labelsize=LABEL_PT)
    ax.grid(axis="x", color="#eeeeee", linewidth=0.6)


def traffic_chart(site: dict, answer: dict, path: str | Path | None = None, width_in: float = 10.0,
                  height_in: float | None = None, dpi: int = 100):
    """Draw the traffic chart; write it to `path` (.png or .svg) if given; return the figure. ValueError when
    no system of the answer has traffic figures with a deadline or a watchdog limit."""
    items = rows(answer)
    if not items:
        raise ValueError("no system states a deadline or a watchdog limit (systems[].traffic)")
    from matplotlib.lines import Line2D

    kit = toolkit()
    fig = kit.figure(figsize=(width_in, height_in or 1.6 + 0.32 * len(items)), dpi=dpi, layout="constrained")
    left, right = fig.subplots(1, 2, sharey=True)
    _panel(left, items, "miss", MISS_FLOOR, "Message misses its deadline", "probability per message")
    _panel(right, items, "stops", STOPS_FLOOR, "Watchdog stops the machine", "stops per hour of operation")
    handles = [Line2D([], [], marker="o", linestyle="-", color=MET, label="predicted, 95 % interval: met"),
               Line2D([], [], marker="o", linestyle="-", color=NOT_MET, label="predicted: not met"),
               Line2D([], [], marker="|", linestyle="", color=LIMIT, markersize=12, label="the system's limit")]
    fig.legend(handles=handles, loc="outside lower center", ncol=3, fontsize=LABEL_PT, frameon=False)
    fig.suptitle(f"Traffic of {site.get('name') or 'the site'}\n{CAUTION}", fontsize=LABEL_PT, color="#333333")
    save(fig, path, dpi)
    return fig
