"""From plan to site and back: apply a plan, read a current plan, diff two sites or plans, the profile list.

Works on the JSON documents the command line reads and writes (sites, requests, saved answers), with the
client's plan helpers (`cohop_client.plans`, standard library only), so nothing here needs the solver stack.
"""

from __future__ import annotations


class WorkflowError(ValueError):
    """A document of the wrong shape for the step asked."""


def apply_plan(site: dict, plan: dict) -> dict:
    """A copy of the site whose systems carry the plan's hop sets and hop orders (cohop_client.apply_plan)."""
    from cohop_client.plans import PlanShapeError
    from cohop_client.plans import apply_plan as _apply_plan

    try:
        return _apply_plan(site, plan)
    except PlanShapeError as err:
        raise WorkflowError(str(err)) from err


def apply_current(site: dict, current: dict) -> dict:
    """The site with a re-plan request's current plan written into it (what `assess` evaluates)."""
    return apply_plan(site, current)


def current_plan(document) -> dict:
    """{"systems": [{"system", "hop_set", "sequence"?}]} from a current plan, a saved answer or a site."""
    if not isinstance(document, dict):
        raise WorkflowError("holds neither a current plan, a saved plan answer, nor a site with hop sets")
    if isinstance(document.get("current"), dict):
        document = document["current"]
    from cohop_client.plans import PlanShapeError, planned_systems

    try:
        return {"systems": planned_systems(document)}
    except PlanShapeError as err:
        raise WorkflowError(f"holds no plan: {err}") from err


# --- diff ----------------------------------------------------------------------------------------------------

def _figures(system: dict) -> dict:
    return {"collision_probability": system["per_hop"]["collision_probability"],
            "residual_loss_probability": system["retries"]["residual_loss_probability"],
            "compliance": system["compliance"]["status"]}


def _read_document(doc) -> dict:
    """{"kind", "systems": {id: {"hop_set", "figures"}}, "interferers": [ids] or None} of any document."""
    if not isinstance(doc, dict):
        raise WorkflowError("each file must hold a JSON object (a site, a request or a saved answer)")
    if isinstance(doc.get("plan"), list):  # a plan or re-plan answer
        figures = {s["id"]: _figures(s) for s in (doc.get("assessment") or {}).get("systems", [])}
        kind = "re-plan" if "changes" in doc else "plan"
        return {"kind": kind, "interferers": None,
                "systems": {p["id"]: {"hop_set": sorted(p["hop_set"]), "figures": figures.get(p["id"])}
                            for p in doc["plan"]}}
    if isinstance(doc.get("systems"), list) and doc["systems"] and "per_hop" in doc["systems"][0]:
        return {"kind": "assessment", "interferers": None,
                "systems": {s["id"]: {"hop_set": sorted(s["hop_set"]), "figures": _figures(s)}
                            for s in doc["systems"]}}
    site = doc.get("site", doc)
    if not isinstance(site, dict) or not isinstance(site.get("systems"), list):
        raise WorkflowError("neither a site, a request, nor a saved assessment, plan or re-plan answer")
    if isinstance(doc.get("current"), dict):  # a re-plan request: its current plan on its site
        site = apply_plan(site, doc["current"])
    return {"kind": "site", "interferers": [i.get("id") for i in site.get("interferers") or []],
            "systems": {s["id"]: {"hop_set": None if s.get("hop_set") is None else sorted(s["hop_set"]),
                                  "figures": None} for s in site["systems"] if isinstance(s, dict) and "id" in s}}


def diff_documents(a, b) -> dict:
    """What changed from document a to document b (sites, requests or saved answers, in any mix)."""
    left, right = _read_document(a), _read_document(b)
    ls, rs = left["systems"], right["systems"]
    out = {"from": left["kind"], "to": right["kind"],
           "systems_added": [i for i in rs if i not in ls], "systems_removed": [i for i in ls if i not in rs],
           "systems": []}
    for sid in [i for i in ls if i in rs]:
        before, after = ls[sid], rs[sid]
        entry = {"id": sid, "dropped": None, "added": None, "before": before["figures"], "after": after["figures"]}
        if before["hop_set"] is not None and after["hop_set"] is not None:
            entry["dropped"] = sorted(set(before["hop_set"]) - set(after["hop_set"]))
            entry["added"] = sorted(set(after["hop_set"]) - set(before["hop_set"]))
        out["systems"].append(entry)
    if left["interferers"] is not None and right["interferers"] is not None:
        out["interferers_added"] = [i for i in right["interferers"] if i not in left["interferers"]]
        out["interferers_removed"] = [i for i in left["interferers"] if i not in right["interferers"]]
    return out


# --- profiles ------------------------------------------------------------------------------------------------

def profiles_json() -> list[dict]:
    """GET /v1/profiles's answer, built from the profile data without the HTTP app (a test holds them equal)."""
    from cohop.regulatory import PROFILES

    return [{"id": p.id, "name": p.name, "region": p.region,
             "band": None if p.band is None else {"low_hz": p.band.low_hz, "high_hz": p.band.high_hz},
             "coordination_caution": p.coordination_caution,
             "rules": [{"id": r.id, "title": r.title, "citation": r.citation, "certainty": r.certainty,
                        "summary": r.summary} for r in p.rules]}
            for p in PROFILES.values()]
