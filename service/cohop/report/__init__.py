"""A self-contained HTML report of an assessment, a plan or a re-plan.

`render_report(body, answer)` returns one HTML document (inline style sheet,
charts as PNG data URIs, no scripts, nothing fetched): the cautions, a
summary, the charts (channel map, the dominant sources when the answer has
them, the site map when anything has a position), the plan or the hop sets
assessed (with a re-plan's changes), every figure with the sources behind
it, compliance with its citations, the baselines, the inputs (the request
itself, survey traces summarised) and the model's assumptions. Works from the
request and answer JSON, like the charts, so a saved answer can be reported
later. Without matplotlib the report says how to add the charts.
"""

from __future__ import annotations

import base64
import io
from pathlib import Path

from cohop.charts.data import kind_of
from cohop.report import sections
from cohop.report.html import document, figure, para, section

CHART_DPI = 110


def _png_uri(fig) -> str:
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=CHART_DPI)
    return "data:image/png;base64," + base64.b64encode(buffer.getvalue()).decode("ascii")


def _charts(body: dict, answer: dict) -> str:
    from cohop.charts import PlotUnavailable, channel_map, site_map, traffic_chart
    from cohop.charts.traffic_panels import rows as traffic_rows
    from cohop.charts.data import assessment_of, kind_of

    site = body["site"]
    try:
        out = figure(_png_uri(channel_map(site, answer)), "channel map",
                     "Each system's channels shaded by predicted per-hop hit probability (channel numbers below, "
                     "MHz above); fixed interferers in lanes on top; figures per row on the right.", "chart-channels")
    except PlotUnavailable as err:
        return section("charts", "Charts", para(f"Charts left out: {err}."))
    systems = assessment_of(answer)["systems"]
    if any(ch.get("dominant_source") for s in systems for ch in s.get("channels") or []):
        out += figure(_png_uri(channel_map(site, answer, dominant=True)), "dominant sources",
                      "The same map with, under each row, the source that hits each channel most.",
                      "chart-dominant")
    if any(i.get("position") for i in site["systems"] + site.get("interferers", [])):
        what = "the new plan" if kind_of(answer) == "replan" else "the hop sets shown"
        out += figure(_png_uri(site_map(site, answer)), "site map",
                      f"Systems and interferers by position; arrows run from a source to the victim it hits "
                      f"(each source alone, with {what}).", "chart-site")
    if traffic_rows(answer):
        out += figure(_png_uri(traffic_chart(site, answer)), "traffic",
                      "For the systems with traffic requirements: how likely a message misses its deadline and how "
                      "often the watchdog stops the machine (dot: predicted; bar: 95 % interval; tick: the "
                      "system's limit).", "chart-traffic")
    return section("charts", "Charts", out)


def render_report(body: dict, answer: dict, charts: bool = True) -> str:
    """The report as one HTML document. `body` is the request (or a bare site); `answer` the service's JSON."""
    body = body if "site" in body else {"site": body}
    parts = [sections.header(body, answer), sections.summary(answer),
             _charts(body, answer) if charts else "", sections.plan(body, answer), sections.figures(answer),
             sections.traffic(answer),
             sections.compliance(answer), sections.baselines(answer), sections.inputs(body),
             sections.assumptions(answer)]
    title = sections.KIND_TITLE[kind_of(answer)]
    return document(f"cohop {title.lower()} report: {body['site'].get('name') or 'site'}", "".join(parts))


def write_report(path: str | Path, body: dict, answer: dict) -> None:
    """Render the report into `path` (opened first, so that an unwritable path fails before any drawing)."""
    with Path(path).open("w", encoding="utf-8") as out:
        out.write(render_report(body, answer))


def install(app):
    """Let `app` answer `?format=html` with this report (`cohop.api.answer_formats`); returns the app."""
    app.config["COHOP_REPORT_RENDERER"] = render_report
    return app
