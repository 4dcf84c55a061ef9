"""What the charts draw, read from the request and answer JSON (plain dicts, no matplotlib).

Kept apart from the drawing so a saved answer can be charted later and so the
tests can check what is drawn against the answer without reading pixels.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

#: Hit-probability bins of the shading (fractions); each bin one colour, labelled in the legend.
HIT_BINS = (0.0, 0.001, 0.01, 0.02, 0.05, 0.1, 0.2, 1.0)
#: A source's standalone per-hop hit probability at a victim from which the site map draws the pair.
HARMFUL_PAIR_MIN = 0.001
#: Line classes of the site map's harmful pairs (lower edges, fractions).
PAIR_CLASSES = (0.001, 0.01, 0.05)


def kind_of(answer: dict) -> str:
    """'replan', 'plan' or 'assessment': which job answered."""
    if "diff" in answer:
        return "replan"
    return "plan" if "plan" in answer else "assessment"


def assessment_of(answer: dict) -> dict:
    return answer.get("assessment", answer)


def hit_bin(p: float) -> int:
    """Index of the shading bin holding probability p (the top bin is closed)."""
    for k in range(len(HIT_BINS) - 1):
        if p < HIT_BINS[k + 1]:
            return k
    return len(HIT_BINS) - 2


def bin_label(k: int) -> str:
    lo, hi = (edge_pct(p) for p in HIT_BINS[k:k + 2])
    return f"< {hi}" if k == 0 else f"{lo} - {hi}"


def edge_pct(p: float) -> str:
    """A class edge as a percentage, as short as it goes (0.001 -> '0.1 %')."""
    return f"{100 * p:g} %"


def pct(p: float) -> str:
    """A probability as a percentage read at once: two significant digits below 10 %, never scientific."""
    if p == 0:
        return "0 %"
    q = 100 * p
    if q < 0.0001:
        return "< 0.0001 %"
    q = float(f"{q:.2g}")
    if q >= 10:
        return f"{q:.0f} %"
    decimals = max(0, 1 - math.floor(math.log10(q)))
    return f"{q:.{decimals}f} %"


@dataclass
class Row:
    """One drawn hop set: its channels, per-channel figures when the answer has them, re-plan marks."""

    system: str
    label: str
    channels: list[int]
    hit: dict[int, float] = field(default_factory=dict)  # channel -> predicted per-hop hit probability
    dominant: dict[int, str] = field(default_factory=dict)  # channel -> the source that hits it most
    dropped: list[int] = field(default_factory=list)
    added: list[int] = field(default_factory=list)
    figures: dict | None = None  # collision_probability, residual_loss_probability
    status: str = ""  # compliance status (assessment), or the re-plan's status of the system
    baseline: float | None = None  # per-hop hit of the best baseline (plan)


@dataclass
class Span:
    """A fixed interferer's span in Hz; `derived` when a survey gave it, `new` when it forced changes."""

    id: str
    low_hz: float
    high_hz: float
    derived: bool = False
    new: bool = False


def _channel_figures(system: dict) -> tuple[dict[int, float], dict[int, str]]:
    hit, dominant = {}, {}
    for ch in system.get("channels") or []:
        hit[ch["channel"]] = ch["collision_probability"]
        if ch.get("dominant_source"):
            dominant[ch["channel"]] = ch["dominant_source"]
    return hit, dominant


def _best_baseline(answer: dict) -> dict[str, float]:
    best = (answer.get("comparison") or {}).get("best_baseline")
    for b in answer.get("baselines") or []:
        if b["name"] == best:
            return {s["id"]: s["collision_probability"] for s in b["systems"]}
    return {}


def rows(answer: dict) -> list[Row]:
    """The rows of the channel map, top to bottom: one per system, two (now, new) per system in a re-plan."""
    systems = {s["id"]: s for s in assessment_of(answer)["systems"]}
    kind = kind_of(answer)
    out = []
    if kind == "replan":
        new = {p["id"]: p["hop_set"] for p in answer["plan"]}
        for d in answer["diff"]:
            hit, dominant = _channel_figures(systems.get(d["id"], {}))
            if d["status"] != "new system":
                now = sorted(set(new[d["id"]]) - set(d["added"]) | set(d["dropped"]))
                out.append(Row(d["id"], f"{d['id']} now", now, dropped=list(d["dropped"]), figures=d.get("before"),
                               status=d["status"]))
            out.append(Row(d["id"], f"{d['id']} new", list(new[d["id"]]), hit, dominant, added=list(d["added"]),
                           figures=d.get("after"), status=d["status"]))
        return out
    plan = {p["id"]: p["hop_set"] for p in answer.get("plan", [])}
    baseline = _best_baseline(answer)
    for sid, s in systems.items():
        hit, dominant = _channel_figures(s)
        out.append(Row(sid, sid, list(plan.get(sid, s["hop_set"])), hit, dominant,
                       figures={"collision_probability": s["per_hop"]["collision_probability"],
                                "residual_loss_probability": s["retries"]["residual_loss_probability"]},
                       status=(s.get("compliance") or {}).get("status", ""), baseline=baseline.get(sid)))
    return out


def spans(site: dict, answer: dict, new_interferers=None) -> list[Span]:
    """The fixed interferers given and those surveys yielded (a survey's span drawn once for all systems).

    In a re-plan, `new_interferers` (ids) are marked new; without it, the interferers whose span overlaps
    a channel the re-plan dropped are (they are what forced the changes).
    """
    out = []
    for itf in site.get("interferers", []):
        if "low_hz" in itf:
            out.append(Span(itf["id"], itf["low_hz"], itf["high_hz"]))
        else:
            half = itf["width_hz"] / 2
            out.append(Span(itf["id"], itf["centre_hz"] - half, itf["centre_hz"] + half))
    seen = set()
    for d in assessment_of(answer).get("derived_interferers", []):
        key = (d["survey"], d["low_hz"], d["high_hz"])
        if key not in seen:
            seen.add(key)
            out.append(Span(f"survey {d['survey']}", d["low_hz"], d["high_hz"], derived=True))
    if kind_of(answer) == "replan":
        if new_interferers is None:
            grid = site["grid"]
            half = grid["spacing_hz"] / 2
            dropped = {grid["first_centre_hz"] + c * grid["spacing_hz"] for d in answer["diff"] for c in d["dropped"]}
            for s in out:
                s.new = any(s.low_hz - half <= f <= s.high_hz + half for f in dropped)
        else:
            wanted = set(new_interferers)
            for s in out:
                s.new = s.id in wanted
    return out


@dataclass
class Pair:
    """A harmful source -> victim pair of the site map, both placed."""

    source: str
    victim: str
    hit: float  # the source's standalone per-hop hit probability at the victim


def _worst_places(answer: dict | None) -> dict[str, tuple[float, float]]:
    """Where each moving system is worst off, from the answer's `mobility` (when it has one)."""
    out = {}
    for s in (assessment_of(answer)["systems"] if answer else []):
        worst = (s.get("mobility") or {}).get("worst_position")
        if worst:
            out[s["id"]] = (worst["position"]["x_m"], worst["position"]["y_m"])
    return out


def positions(site: dict, answer: dict | None = None) -> tuple[dict[str, tuple[float, float]],
                                                              dict[str, tuple[float, float]]]:
    """(systems, interferers) that have a place: id -> (x_m, y_m). A system that moves (`positions` or
    `area`) is placed where the answer says it is worst off, else at its first position or the area's
    centre."""
    worst = _worst_places(answer)

    def place(item):
        if item.get("position"):
            return item["position"]["x_m"], item["position"]["y_m"]
        if item["id"] in worst:
            return worst[item["id"]]
        if item.get("positions"):
            return item["positions"][0]["x_m"], item["positions"][0]["y_m"]
        if item.get("area"):
            a = item["area"]
            return (a["x_min_m"] + a["x_max_m"]) / 2, (a["y_min_m"] + a["y_max_m"]) / 2
        return None

    def placed(items):
        return {i["id"]: p for i in items if (p := place(i)) is not None}
    return placed(site.get("systems", [])), placed(site.get("interferers", []))


def tracks(site: dict) -> dict[str, list[tuple[float, float]]]:
    """The ground a moving system covers: its positions in order, or its area's corners (closed)."""
    out = {}
    for s in site.get("systems", []):
        if s.get("positions") and len(s["positions"]) > 1:
            out[s["id"]] = [(p["x_m"], p["y_m"]) for p in s["positions"]]
        elif s.get("area"):
            a = s["area"]
            out[s["id"]] = [(a["x_min_m"], a["y_min_m"]), (a["x_max_m"], a["y_min_m"]), (a["x_max_m"], a["y_max_m"]),
                            (a["x_min_m"], a["y_max_m"]), (a["x_min_m"], a["y_min_m"])]
    return out


def harmful_pairs(site: dict, answer: dict) -> list[Pair]:
    """Source -> victim pairs whose standalone hit is at least HARMFUL_PAIR_MIN, between placed ends."""
    systems, interferers = positions(site, answer)
    placed = systems | interferers
    out = []
    for s in assessment_of(answer)["systems"]:
        for src in s.get("sources") or []:
            if src["collision_probability"] >= HARMFUL_PAIR_MIN and src["id"] in placed and s["id"] in placed:
                out.append(Pair(src["id"], s["id"], src["collision_probability"]))
    return sorted(out, key=lambda p: p.hit)


def pack_lanes(intervals: list[tuple[float, float]], gap: float = 0.0) -> list[int]:
    """Lane of each interval such that no two intervals in one lane overlap (greedy by start: first fit).

    Used to place labels and bars so that none overlaps another.
    """
    order = sorted(range(len(intervals)), key=lambda i: intervals[i][0])
    ends: list[float] = []
    lane = [0] * len(intervals)
    for i in order:
        lo, hi = intervals[i]
        for k, end in enumerate(ends):
            if lo >= end + gap:
                lane[i], ends[k] = k, hi
                break
        else:
            lane[i] = len(ends)
            ends.append(hi)
    return lane
