"""The site map: systems and fixed interferers by position, with the harmful source -> victim pairs drawn.

A pair is drawn when the source's standalone per-hop hit probability at the
victim (the assessment's `sources[].collision_probability`) reaches
`data.HARMFUL_PAIR_MIN`; its line grows with `data.PAIR_CLASSES`. Labels are
placed beside their markers at the first of eight offsets where they overlap
no label or marker already placed (measured by the renderer). Systems and
interferers without a position are listed under the map.
"""

from __future__ import annotations

import textwrap
from pathlib import Path

from cohop.charts import data
from cohop.charts._mpl import CAUTION, INTERFERER, NEW_INTERFERER, SOURCE_COLOURS, toolkit, save

LABEL_PT = 7.0
PAIR_STYLE = (("#e9c46a", 0.8), ("#f4a261", 1.6), ("#d62828", 2.8))  # colour, width per data.PAIR_CLASSES
OFFSETS = ((6, 6), (6, -12), (-6, 6), (-6, -12), (0, 12), (0, -16), (12, 0), (-12, 0))


def _pair_class(hit: float) -> int:
    return max(k for k, lo in enumerate(data.PAIR_CLASSES) if hit >= lo)


def _place_labels(fig, ax, points: list[tuple[str, float, float]]) -> None:
    from matplotlib.transforms import Bbox

    renderer = fig.canvas.get_renderer()
    frame = ax.get_window_extent(renderer)
    taken = []
    for _, x, y in points:  # the markers themselves (about 9 pt across)
        px, py = ax.transData.transform((x, y))
        half = 5 * fig.dpi / 72
        taken.append(Bbox([[px - half, py - half], [px + half, py + half]]))
    for name, x, y in points:
        for dx, dy in OFFSETS:
            text = ax.annotate(name, (x, y), xytext=(dx, dy), textcoords="offset points", fontsize=LABEL_PT,
                               ha="left" if dx >= 0 else "right", va="bottom", gid=f"label:{name}")
            box = text.get_window_extent(renderer).expanded(1.05, 1.1)
            inside = frame.x0 <= box.x0 and box.x1 <= frame.x1 and frame.y0 <= box.y0 and box.y1 <= frame.y1
            if inside and not any(box.overlaps(t) for t in taken):
                taken.append(box)
                break
            text.remove()
        else:
            taken.append(ax.annotate(name, (x, y), xytext=OFFSETS[0], textcoords="offset points",
                                     fontsize=LABEL_PT, gid=f"label:{name}").get_window_extent(renderer))


def site_map(site: dict, answer: dict, path: str | Path | None = None, width_in: float = 7.0,
             height_in: float = 6.0, dpi: int = 100, new_interferers=None):
    """Draw the site map; write it to `path` (.png or .svg) if given; return the matplotlib figure."""
    kit = toolkit()
    from matplotlib.lines import Line2D
    from matplotlib.patches import FancyArrowPatch

    systems, interferers = data.positions(site, answer)
    moving = data.tracks(site)
    new = {s.id for s in data.spans(site, answer, new_interferers) if s.new}
    fig = kit.figure(figsize=(width_in, height_in), dpi=dpi, layout="constrained")
    ax = fig.add_subplot()
    where = systems | interferers
    for pair in data.harmful_pairs(site, answer):
        (x0, y0), (x1, y1) = where[pair.source], where[pair.victim]
        colour, lw = PAIR_STYLE[_pair_class(pair.hit)]
        ax.add_patch(FancyArrowPatch((x0, y0), (x1, y1), arrowstyle="-|>", mutation_scale=10, color=colour,
                                     linewidth=lw, shrinkA=6, shrinkB=6, alpha=0.9,
                                     gid=f"pair:{pair.source}->{pair.victim}"))
    for i, (sid, (x, y)) in enumerate(systems.items()):
        colour = SOURCE_COLOURS[i % len(SOURCE_COLOURS)]
        if sid in moving:  # the ground it covers, dotted; the marker where it is worst off
            xs_t, ys_t = zip(*moving[sid])
            ax.plot(xs_t, ys_t, ":", color=colour, linewidth=1.2, gid=f"track:{sid}")
        ax.plot([x], [y], "o", color=colour, markersize=8, gid=f"system:{sid}")
    for iid, (x, y) in interferers.items():
        ax.plot([x], [y], "^", color=NEW_INTERFERER if iid in new else INTERFERER, markersize=9,
                markeredgecolor="black" if iid in new else "none", gid=f"interferer:{iid}")
    ground = list(where.values()) + [p for t in moving.values() for p in t]
    xs = [p[0] for p in ground] or [0.0]
    ys = [p[1] for p in ground] or [0.0]
    pad = 0.12 * max(max(xs) - min(xs), max(ys) - min(ys), 10.0)
    ax.set_xlim(min(xs) - pad, max(xs) + pad)
    ax.set_ylim(min(ys) - pad, max(ys) + pad)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel("x [m]", fontsize=LABEL_PT + 1)
    ax.set_ylabel("y [m]", fontsize=LABEL_PT + 1)
    ax.tick_params(labelsize=LABEL_PT)
    ax.tick_params(axis="x", pad=7)  # clears the lowest y label at the corner
    ax.grid(color="#eeeeee", linewidth=0.6)
    fig.canvas.draw()  # fixes the limits the labels are measured against
    _place_labels(fig, ax, [(("NEW " if k in new else "") + k, *v) for k, v in where.items()])
    handles = [Line2D([], [], marker="o", linestyle="", color=SOURCE_COLOURS[0], label="hopping system"),
               Line2D([], [], marker="^", linestyle="", color=INTERFERER, label="fixed interferer")]
    if moving:
        handles.append(Line2D([], [], marker="o", linestyle=":", color=SOURCE_COLOURS[0],
                              label="moving system: its ground, marked where it is worst off"))
    if new:
        handles.append(Line2D([], [], marker="^", linestyle="", color=NEW_INTERFERER, markeredgecolor="black",
                              label="new interferer"))
    for k, (colour, lw) in enumerate(PAIR_STYLE):
        hi = data.PAIR_CLASSES[k + 1] if k + 1 < len(data.PAIR_CLASSES) else None
        lo = data.edge_pct(data.PAIR_CLASSES[k])
        span = f"{lo} - {data.edge_pct(hi)}" if hi else f">= {lo}"
        handles.append(Line2D([], [], color=colour, lw=lw, label=f"source -> victim, hit {span} per hop"))
    fig.legend(handles=handles, loc="outside lower center", ncol=3, fontsize=LABEL_PT, frameon=False)
    unplaced = [s["id"] for s in site.get("systems", []) + site.get("interferers", []) if s["id"] not in where]
    title = f"Site map of {site.get('name') or 'the site'}: harmful pairs"
    if not any(s.get("sources") for s in data.assessment_of(answer)["systems"]):
        title += "\n(the answer has no per-source figures: ask with detail \"channel\" or \"source\" for the pairs)"
    if unplaced:
        title += "\n" + textwrap.fill("no position given: " + ", ".join(unplaced), 110)
    ax.set_title(title, fontsize=LABEL_PT + 1, loc="left")
    fig.suptitle(textwrap.fill(CAUTION, 130), fontsize=5.5, color="#555555")
    save(fig, path, dpi)
    return fig
