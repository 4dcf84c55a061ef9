"""Plans as data: the current plan of a saved answer, and a plan written back into a site (standard library only)."""

from __future__ import annotations

import copy
from typing import Any


class PlanShapeError(ValueError):
    """The document is not a plan, an answer or a site of the expected shape."""


def _raw(plan: Any) -> dict:
    raw = getattr(plan, "raw", plan)  # a typed Plan or Replan, or its JSON
    if not isinstance(raw, dict):
        raise PlanShapeError("a plan must be a Plan, a Replan or their JSON answer (an object)")
    return raw


def planned_systems(plan: Any) -> list[dict]:
    """[{"system", "hop_set", "sequence" (or absent)}] from a plan or re-plan answer, a current plan
    ({"systems": [{"system", "hop_set", "sequence"}]}), a site or a request whose systems carry hop sets."""
    raw = _raw(plan)
    if isinstance(raw.get("plan"), list):
        orders = {s["id"]: list(s["channels"]) for s in (raw.get("sequences") or {}).get("systems", [])}
        out = []
        for p in raw["plan"]:
            entry = {"system": p["id"], "hop_set": sorted(p["hop_set"])}
            if p["id"] in orders:
                entry["sequence"] = orders[p["id"]]
            out.append(entry)
        return out
    site = raw.get("site", raw)
    systems = site.get("systems") if isinstance(site, dict) else None
    # a current plan names its systems by "system" (a reference); a site's systems carry their own "id"
    if isinstance(systems, list) and all(isinstance(s, dict) and ("system" in s or "id" in s) for s in systems):
        out = []
        for s in systems:
            if s.get("hop_set") is None:
                continue
            entry = {"system": s["system"] if "system" in s else s["id"], "hop_set": sorted(s["hop_set"])}
            if s.get("sequence") is not None:
                entry["sequence"] = list(s["sequence"])
            out.append(entry)
        if out:
            return out
        raise PlanShapeError("no system carries a hop set")
    raise PlanShapeError("neither a plan or re-plan answer, a current plan, nor a site with hop sets")


def current_plan(document: Any) -> dict:
    """The `current` of a re-plan request from any document `planned_systems` reads."""
    return {"systems": planned_systems(document)}


def apply_plan(site: dict, plan: Any) -> dict:
    """A copy of `site` whose systems carry the plan's hop sets and hop orders.

    `plan`: a Plan or Replan from this client, its JSON, or a current plan. A system the plan names but the
    site lacks is an error; a system the plan leaves out keeps its own hop set. A system whose hop set the
    plan sets without an order loses any order it had (it would no longer match its hop set)."""
    if not isinstance(site, dict) or not isinstance(site.get("systems"), list):
        raise PlanShapeError("the site must be an object with a 'systems' list")
    out = copy.deepcopy(site)
    by_id = {s.get("id"): s for s in out["systems"] if isinstance(s, dict)}
    for planned in planned_systems(plan):
        target = by_id.get(planned["system"])
        if target is None:
            raise PlanShapeError(f"the plan names system {planned['system']!r}, which the site does not have")
        target["hop_set"] = list(planned["hop_set"])
        if "sequence" in planned:
            target["sequence"] = list(planned["sequence"])
        else:
            target.pop("sequence", None)
    return out
