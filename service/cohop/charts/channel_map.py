"""The channel map: one row per hop set, each channel shaded by its predicted per-hop hit probability.

Channel numbers (grid index) run along the bottom, MHz along the top. Each
cell is as wide as the system's occupied bandwidth against the grid spacing.
The fixed interferers sit in lanes above the rows (surveyed spans hatched;
in a re-plan the interferer that forced the changes is outlined in red and
its span tinted across every row). A column on the right gives each row's
figures: the assessment's compliance status, the plan's best baseline, or a
re-plan's before and after. Labels are packed into lanes so that none
overlaps another. With `dominant=True` a thin strip under each row shows,
per channel, the source that hits it most.
"""

from __future__ import annotations

import textwrap
from pathlib import Path

from cohop.charts import data
from cohop.charts._mpl import (ADDED, CAUTION, DROPPED, HIT_COLOURS, INTERFERER, NEUTRAL, NEW_INTERFERER,
                               SOURCE_COLOURS, USED_NOW, toolkit, save)

LABEL_PT = 7.0


def _title(site: dict, answer: dict) -> str:
    name = site.get("name") or "site"
    kind = data.kind_of(answer)
    if kind == "replan":
        changes = (answer.get("changes") or {}).get("count")
        return f"Re-plan of {name}: {changes} channel changes, current hop sets above the new ones"
    if kind == "plan":
        return f"Plan for {name} ({answer.get('coordination', 'joint')} coordination)"
    return f"Assessment of {name}: hop sets as given"


def _row_text(kind: str, row: data.Row) -> str:
    f = row.figures or {}
    head = (f"{data.pct(f['collision_probability'])} per hop, {data.pct(f['residual_loss_probability'])} lost"
            if f else "no figures")
    if kind == "assessment":
        return f"{head}; {row.status or 'not checked'}"
    if kind == "plan":
        return head + (f"; baseline {data.pct(row.baseline)}" if row.baseline is not None else "")
    return head + (f"; {row.status}" if row.label.endswith(" new") else "")


def _column_head(kind: str) -> str:
    return {"assessment": "hit per hop, lost after retries; compliance",
            "plan": "hit per hop, lost after retries; best baseline",
            "replan": "hit per hop, lost after retries (before / after)"}[kind]


def _cells(kit, row: data.Row, y: float, width: float, top: float, height: float, colour_of, gid: str):
    from matplotlib.collections import PatchCollection

    patches = [kit.Rectangle((c - width / 2, y + top), width, height) for c in row]
    return PatchCollection(patches, facecolors=[colour_of(c) for c in row], edgecolors="none", gid=gid)


def _dominant_colours(rows: list[data.Row]) -> dict[str, str]:
    counts: dict[str, int] = {}
    for r in rows:
        for s in r.dominant.values():
            counts[s] = counts.get(s, 0) + 1
    ranked = sorted(counts, key=lambda s: (-counts[s], s))
    return {s: SOURCE_COLOURS[i] if i < len(SOURCE_COLOURS) - 1 else SOURCE_COLOURS[-1]
            for i, s in enumerate(ranked)}


def _draw_rows(kit, ax, site, rows, kind, dominant):
    grid = site["grid"]
    width = {s["id"]: min(0.92, s["bandwidth_hz"] / grid["spacing_hz"]) for s in site["systems"]}
    source_colour = _dominant_colours(rows) if dominant else {}
    cell_top, cell_h = (-0.42, 0.52) if dominant else (-0.38, 0.76)
    for y, row in enumerate(rows):
        ax.axhspan(y - 0.5, y + 0.5, color="#f7f7f5" if y % 2 else "#ffffff", zorder=0, linewidth=0)
        w = width.get(row.system, 0.9)
        if kind == "replan" and row.label.endswith(" now"):
            kept = [c for c in row.channels if c not in set(row.dropped)]
            ax.add_collection(_cells(kit, kept, y, w, cell_top, cell_h, lambda c: USED_NOW, f"now:{row.label}"))
            gone = _cells(kit, row.dropped, y, w, cell_top, cell_h, lambda c: DROPPED, f"dropped:{row.label}")
            gone.set_hatch("xxx")
            gone.set_edgecolor("white")
            ax.add_collection(gone)
        else:
            colour = (lambda c: HIT_COLOURS[data.hit_bin(row.hit[c])] if c in row.hit else NEUTRAL)
            ax.add_collection(_cells(kit, row.channels, y, w, cell_top, cell_h, colour, f"row:{row.label}"))
        if row.added:
            added = _cells(kit, row.added, y, w + 0.06, cell_top - 0.05, cell_h + 0.1, lambda c: "none",
                           f"added:{row.label}")
            added.set_edgecolor(ADDED)
            added.set_linewidth(1.4)
            ax.add_collection(added)
        if dominant and row.dominant:
            chans = sorted(row.dominant)
            ax.add_collection(_cells(kit, chans, y, w, 0.14, 0.26, lambda c: source_colour[row.dominant[c]],
                                     f"dominant:{row.label}"))
    return source_colour


def _to_index(grid: dict, f_hz: float) -> float:
    return (f_hz - grid["first_centre_hz"]) / grid["spacing_hz"]


def _draw_interferers(kit, fig, lane_ax, row_ax, site, spans):
    """Bars and labels in lanes: each item spans its bar and its label as the renderer measures it.

    Call once the figure's layout is settled (widths do not depend on the lanes). A label that would run
    past the band's right edge ends at its bar's end instead.
    """
    grid = site["grid"]
    renderer = fig.canvas.get_renderer()
    x_lo, x_hi = lane_ax.get_xlim()
    per_px = (x_hi - x_lo) / lane_ax.get_window_extent(renderer).width
    items, labelled = [], set()
    for s in spans:
        x0, x1 = _to_index(grid, s.low_hz), _to_index(grid, s.high_hz)
        x1 = max(x1, x0 + 0.5)
        text = "" if s.derived and s.id in labelled else ("NEW " if s.new else "") + s.id
        labelled.add(s.id)
        label = None
        if text:
            label = lane_ax.text(x0, 0, text, fontsize=LABEL_PT, va="bottom", ha="left", clip_on=False,
                                 fontweight="bold" if s.new else "normal", color=NEW_INTERFERER if s.new else "#22223b",
                                 gid=f"label:{s.id}")
            width = label.get_window_extent(renderer).width * per_px
            if x0 + width > x_hi:
                anchor = min(x1, x_hi)
                label.set_horizontalalignment("right")
                label.set_x(anchor)
                lo, hi = min(x0, anchor - width), max(x1, anchor)
            else:
                lo, hi = x0, max(x1, x0 + width)
        else:
            lo, hi = x0, x1
        items.append((s, x0, x1, label, lo, hi))
    lanes = data.pack_lanes([(lo, hi) for *_, lo, hi in items], gap=6 * per_px)
    n_lanes = max(lanes, default=-1) + 1
    for (s, x0, x1, label, _, _), lane in zip(items, lanes):
        y = n_lanes - 1 - lane
        colour = NEW_INTERFERER if s.new else INTERFERER
        lane_ax.add_patch(kit.Rectangle((x0, y + 0.08), x1 - x0, 0.34, facecolor=colour,
                                        alpha=0.35 if s.derived else 0.8, hatch="////" if s.derived else None,
                                        edgecolor=colour if s.new else "none", linewidth=1.5,
                                        gid=f"interferer:{s.id}"))
        if label is not None:
            label.set_y(y + 0.5)
        if s.new:
            row_ax.axvspan(x0, x1, color=NEW_INTERFERER, alpha=0.10, zorder=0.5, linewidth=0)
    lane_ax.set_ylim(0, max(n_lanes, 1) + 0.05)
    return n_lanes


def _legend_handles(kit, rows, kind, spans, source_colour):
    from matplotlib.patches import Patch

    used = sorted({data.hit_bin(p) for r in rows for p in r.hit.values()})
    handles = [Patch(facecolor=HIT_COLOURS[k], label=f"hit {data.bin_label(k)}") for k in used]
    if any(c not in r.hit for r in rows if not r.label.endswith(" now") for c in r.channels):
        handles.append(Patch(facecolor=NEUTRAL, label="in hop set, no per-channel figure"))
    if kind == "replan":
        handles += [Patch(facecolor=USED_NOW, label="current channel kept"),
                    Patch(facecolor=DROPPED, hatch="xxx", edgecolor="white", label="dropped"),
                    Patch(facecolor="none", edgecolor=ADDED, linewidth=1.4, label="added")]
    handles.append(Patch(facecolor=INTERFERER, alpha=0.8, label="interferer (given)"))
    if any(s.derived for s in spans):
        handles.append(Patch(facecolor=INTERFERER, alpha=0.35, hatch="////", label="interferer (from survey)"))
    if any(s.new for s in spans):
        handles.append(Patch(facecolor=NEW_INTERFERER, alpha=0.8, edgecolor=NEW_INTERFERER,
                             label="new: overlaps dropped channels"))
    handles += [Patch(facecolor=c, label=f"dominant: {s}") for s, c in list(source_colour.items())[:9]]
    return handles


def _auto_height(n_rows: int) -> float:
    return min(16.0, max(4.5, 2.4 + 0.32 * n_rows))


def channel_map(site: dict, answer: dict, path: str | Path | None = None, width_in: float = 11.0,
                height_in: float | None = None, dpi: int = 100, dominant: bool = False, new_interferers=None):
    """Draw the map; write it to `path` (.png or .svg) if given; return the matplotlib figure.

    `height_in` None sizes the figure to its rows. `new_interferers` (ids) names the interferers a re-plan
    marks as new; without it, those overlapping a dropped channel are.
    """
    kit = toolkit()
    grid = site["grid"]
    kind = data.kind_of(answer)
    rows = data.rows(answer)
    spans = data.spans(site, answer, new_interferers)
    fig = kit.figure(figsize=(width_in, height_in or _auto_height(len(rows))), dpi=dpi, layout="constrained")
    outer = fig.add_gridspec(2, 2, width_ratios=[4.2, 1.6], height_ratios=[2, max(3, len(rows))],
                             wspace=0.01, hspace=0.02)
    lane_ax = fig.add_subplot(outer[0, 0])
    ax = fig.add_subplot(outer[1, 0], sharex=lane_ax)
    col = fig.add_subplot(outer[1, 1], sharey=ax)
    corner = fig.add_subplot(outer[0, 1])
    corner.set_axis_off()
    corner.text(0.0, 1.0, textwrap.fill(CAUTION, 44), fontsize=5.5, va="top", ha="left", color="#555555",
                transform=corner.transAxes, gid="caution")
    x_lo, x_hi = -1.0, grid["count"]
    source_colour = _draw_rows(kit, ax, site, rows, kind, dominant)
    ax.set_xlim(x_lo, x_hi)
    ax.set_ylim(len(rows) - 0.5, -0.5)
    ax.set_yticks(range(len(rows)))
    ax.set_yticklabels([r.label for r in rows], fontsize=LABEL_PT)
    ax.tick_params(axis="x", labelsize=LABEL_PT)
    ax.xaxis.get_major_locator().set_params(integer=True)
    ax.set_xlabel(f"channel (grid index; 0 is {grid['first_centre_hz'] / 1e6:.3f} MHz, "
                  f"step {grid['spacing_hz'] / 1e3:g} kHz)", fontsize=LABEL_PT + 1)
    top = lane_ax.secondary_xaxis("top", functions=(
        lambda x: (grid["first_centre_hz"] + x * grid["spacing_hz"]) / 1e6,
        lambda m: (m * 1e6 - grid["first_centre_hz"]) / grid["spacing_hz"]))
    top.set_xlabel("frequency [MHz]", fontsize=LABEL_PT + 1)
    top.tick_params(labelsize=LABEL_PT)
    lane_ax.tick_params(axis="x", bottom=False, labelbottom=False)
    row_pt = height_in * 72 * 0.7 / max(len(rows), 1) if height_in else 0.32 * 72 * 0.85
    size = max(4.0, min(LABEL_PT, 0.55 * row_pt))
    col.set_axis_off()
    col.text(0.0, -0.5, _column_head(kind), fontsize=size, va="bottom", ha="left", fontweight="bold",
             transform=col.get_yaxis_transform(), gid="column-head")
    for y, row in enumerate(rows):
        col.text(0.0, y, _row_text(kind, row), fontsize=size, va="center", ha="left",
                 transform=col.get_yaxis_transform(), gid=f"figures:{row.label}")
    handles = _legend_handles(kit, rows, kind, spans, source_colour)
    fig.legend(handles=handles, loc="outside lower center", ncol=min(5, len(handles)), fontsize=LABEL_PT,
               frameon=False)
    fig.suptitle(_title(site, answer), fontsize=LABEL_PT + 3, x=0.01, ha="left")
    lane_ax.set_yticks([])
    lane_ax.set_ylabel("interferers", fontsize=LABEL_PT, rotation=0, ha="right", va="center")
    for side in ("left", "right", "bottom"):
        lane_ax.spines[side].set_visible(False)
    fig.canvas.draw()  # settles the layout, so that labels can be measured
    n_lanes = _draw_interferers(kit, fig, lane_ax, ax, site, spans)
    outer.set_height_ratios([0.6 * max(n_lanes, 1) + 0.8, max(3, len(rows))])
    save(fig, path, dpi)
    return fig
