"""Channel maps of an assessment, a plan or a re-plan (matplotlib, an optional extra).

Frequency runs across; each system has a row of its channels (each drawn as
wide as its occupied bandwidth), its predicted per-hop collision and residual
loss written beside it; fixed interferers are shaded in a strip beneath and
survey traces drawn under that. A re-plan shows two rows per system, the
current hop set above the new one, with dropped channels crossed out and
added ones outlined. Works from the request and answer JSON, so a saved
answer can be charted later.
"""

from __future__ import annotations

from pathlib import Path

PALETTE = ("#1f6f8b", "#99582a", "#6a4c93", "#2a9d8f", "#bc4749", "#386641", "#e09f3e", "#3d5a80", "#7f5539",
           "#5f0f40")
ADDED, DROPPED, INTERFERER = "#2b9348", "#d00000", "#f4a261"


class PlotUnavailable(RuntimeError):
    pass


def _pyplot():
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError as err:
        raise PlotUnavailable("charts need matplotlib: pip install 'cohop[plot]'") from err
    return plt


def _pct(p: float) -> str:
    return "0" if p == 0 else (f"{100 * p:.1e}%" if p < 1e-4 else f"{100 * p:.2f}%")


def _figures(answer: dict) -> dict[str, dict]:
    assessment = answer.get("assessment", answer)
    return {s["id"]: s for s in assessment["systems"]}


def _interferers(site: dict, answer: dict) -> list[tuple[str, float, float, bool]]:
    """(label, low, high, from a survey); spans a survey gives several systems are drawn once."""
    out = []
    for itf in site.get("interferers", []):
        if "low_hz" in itf:
            out.append((itf["id"], itf["low_hz"], itf["high_hz"], False))
        else:
            out.append((itf["id"], itf["centre_hz"] - itf["width_hz"] / 2, itf["centre_hz"] + itf["width_hz"] / 2,
                        False))
    assessment = answer.get("assessment", answer)
    seen, named = set(), set()
    for d in assessment.get("derived_interferers", []):
        if (d["survey"], d["low_hz"], d["high_hz"]) not in seen:
            seen.add((d["survey"], d["low_hz"], d["high_hz"]))
            label = "" if d["survey"] in named else f"survey {d['survey']}"
            named.add(d["survey"])
            out.append((label, d["low_hz"], d["high_hz"], True))
    return out


def _rows(site: dict, answer: dict) -> list[dict]:
    """One row per drawn hop set: label, channels, marks."""
    figures = _figures(answer)
    rows = []
    if "diff" in answer:  # a re-plan
        new = {p["id"]: p["hop_set"] for p in answer["plan"]}
        for d in answer["diff"]:
            now = sorted(set(new[d["id"]]) - set(d["added"]) | set(d["dropped"]))
            if d["status"] != "new system":
                rows.append({"id": d["id"], "label": f"{d['id']} now", "channels": now, "dropped": d["dropped"],
                             "added": [], "figures": d.get("before")})
            rows.append({"id": d["id"], "label": f"{d['id']} new", "channels": new[d["id"]], "dropped": [],
                         "added": d["added"], "figures": d.get("after")})
        return rows
    plan = {p["id"]: p["hop_set"] for p in answer.get("plan", [])}
    for sid, f in figures.items():
        rows.append({"id": sid, "label": sid, "channels": plan.get(sid, f["hop_set"]), "dropped": [], "added": [],
                     "figures": {"collision_probability": f["per_hop"]["collision_probability"],
                                 "residual_loss_probability": f["retries"]["residual_loss_probability"]}})
    return rows


def channel_map(site: dict, answer: dict, path: str | Path | None = None, width_in: float = 11.0,
                height_in: float = 6.0, dpi: int = 100):
    """Draw the map; write it to `path` (.png or .svg) if given; return the matplotlib figure."""
    plt = _pyplot()
    grid = site["grid"]
    centres = [grid["first_centre_hz"] + k * grid["spacing_hz"] for k in range(grid["count"])]
    bandwidth = {s["id"]: s["bandwidth_hz"] for s in site["systems"]}
    colour = {s["id"]: PALETTE[i % len(PALETTE)] for i, s in enumerate(site["systems"])}
    rows = _rows(site, answer)
    surveys = site.get("surveys", [])
    fig = plt.figure(figsize=(width_in, height_in), dpi=dpi)
    heights = [max(3, len(rows)), 1] + ([1.2] if surveys else [])
    axes = fig.subplots(len(heights), 1, sharex=True, gridspec_kw={"height_ratios": heights})
    ax, strip = axes[0], axes[1]
    mhz = 1e-6
    for y, row in enumerate(rows):
        half = bandwidth[row["id"]] / 2
        for c in row["channels"]:
            ax.add_patch(plt.Rectangle(((centres[c] - half) * mhz, y - 0.35), 2 * half * mhz, 0.7,
                                       color=colour[row["id"]], linewidth=0))
        for c in row["added"]:
            ax.add_patch(plt.Rectangle(((centres[c] - half) * mhz, y - 0.45), 2 * half * mhz, 0.9, fill=False,
                                       edgecolor=ADDED, linewidth=1.2))
        if row["dropped"]:
            ax.plot([centres[c] * mhz for c in row["dropped"]], [y] * len(row["dropped"]), "x", color=DROPPED,
                    markersize=5)
        f = row["figures"]
        if f:
            ax.annotate(f"hit {_pct(f['collision_probability'])}, after retries {_pct(f['residual_loss_probability'])}",
                        xy=(1.005, y), xycoords=("axes fraction", "data"), va="center", fontsize=7)
    ax.set_ylim(len(rows) - 0.5, -0.5)
    ax.set_yticks(range(len(rows)))
    ax.set_yticklabels([r["label"] for r in rows], fontsize=7)
    ax.set_xlim((centres[0] - grid["spacing_hz"]) * mhz, (centres[-1] + grid["spacing_hz"]) * mhz)
    ax.set_title(site.get("name") or "channel map", fontsize=9)
    for k, (name, lo, hi, derived) in enumerate(_interferers(site, answer)):
        strip.axvspan(lo * mhz, max(hi, lo + grid["spacing_hz"] / 4) * mhz, ymin=0.5 if derived else 0.0,
                      ymax=1.0 if derived else 0.5, color=INTERFERER, alpha=0.4 if derived else 0.6,
                      hatch="//" if derived else None)
        strip.text((lo + hi) / 2 * mhz, 0.75 if derived else 0.25, name, fontsize=6, ha="center", va="center",
                   clip_on=True)
    strip.set_yticks([])
    strip.set_ylim(0, 1)
    strip.set_ylabel("interferers\n(given / surveyed)", fontsize=6)
    if surveys:
        trace = axes[2]
        for s in surveys:
            trace.plot([f * mhz for f in s["frequencies_hz"]], s["levels_dbm"], linewidth=0.7, label=s["id"])
        trace.set_ylabel("survey\ndBm / RBW", fontsize=7)
        trace.legend(fontsize=6, loc="upper right")
    axes[-1].set_xlabel("frequency [MHz]", fontsize=8)
    fig.subplots_adjust(left=0.16, right=0.78, top=0.94, bottom=0.09, hspace=0.08)
    fig.text(0.01, 0.005, "Planning estimate: confirm with a site survey; local regulations prevail.", fontsize=6)
    if path is not None:
        fig.savefig(path, dpi=dpi)
    return fig
