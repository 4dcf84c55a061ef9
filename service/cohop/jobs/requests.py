"""What each job is asked: one frozen dataclass per request, and loaders from plain dicts.

A request's parts come from the layers that use them: the `Site` (`cohop.site`),
`PlanRequirements` and `SystemRequirement` (`cohop.planning.requirements`: the
requirements, the search options and the baselines of a plan), `CurrentSystem`
and `ReplanMode` (`cohop.planning.replan`). Every default is defined once, on
these dataclasses; the request schemas show the same ones (they take their
`load_default` from here).

The JSON form of a request (what `POST /v1/plans` takes) becomes a request in
two steps: the request schemas check field types and ranges, and the rules
across fields live here (the request's own) and in `cohop.site_rules` (the
site's). `load_assessment_request`, `load_plan_request` and
`load_replan_request` take the plain dict (types trusted) and run every rule,
for tests, benchmarks and tools without the HTTP layer: SiteError with JSON
pointers into the request.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

from cohop.errors import SiteError
from cohop.limits import MAX_SIMULATED_HOPS
from cohop.planning.replan import CurrentSystem, ReplanMode
from cohop.planning.requirements import BASELINES, LINEAR_OBJECTIVES, PlanRequirements, SystemRequirement
from cohop.site import Site
from cohop.site_rules import Problem, load_site, raise_site_error, under

#: Per-channel figures in every answer unless the request asks for less or more (`cohop.assess.DETAIL_LEVELS`).
DEFAULT_DETAIL = "channel"

__all__ = ["AssessmentRequest", "CurrentSystem", "PlanRequest", "PlanRequirements", "ReplanMode", "ReplanRequest",
           "SimulationRequest", "SystemRequirement", "load_assessment_request", "load_plan_request",
           "load_replan_request"]


@dataclass(frozen=True)
class SimulationRequest:
    trials_per_system: int
    seed: int = 0


@dataclass(frozen=True)
class AssessmentRequest:
    site: Site
    simulation: SimulationRequest | None = None
    detail: str = DEFAULT_DETAIL


@dataclass(frozen=True)
class PlanRequest:
    site: Site
    requirements: PlanRequirements = field(default_factory=PlanRequirements)
    detail: str = DEFAULT_DETAIL


@dataclass(frozen=True)
class ReplanRequest:
    site: Site
    current: tuple[CurrentSystem, ...]
    requirements: PlanRequirements = field(default_factory=PlanRequirements)
    mode: ReplanMode = field(default_factory=ReplanMode)


# --- rules on one object of the request form ---------------------------------

def system_requirement_problems(d: Mapping) -> list[Problem]:
    out = []
    lo, hi = d.get("min_channels"), d.get("max_channels")
    if lo is not None and hi is not None and hi < lo:
        out.append((("max_channels",), "Must not be below min_channels."))
    excluded, pinned = d.get("excluded_channels") or (), d.get("pinned_channels") or ()
    both = set(excluded) & set(pinned)
    if both:
        out.append((("pinned_channels",), f"Channels {sorted(both)} are both pinned and excluded."))
    for name, chans in (("excluded_channels", excluded), ("pinned_channels", pinned)):
        if len(set(chans)) != len(chans):
            out.append(((name,), "Channels must not repeat."))
    return out


def requirements_problems(d: Mapping) -> list[Problem]:
    ids = [r["system"] for r in d.get("systems") or ()]
    out = [(("systems",), "One entry per system.")] if len(set(ids)) != len(ids) else []
    order = d.get("commissioning_order") or ()
    if len(set(order)) != len(order):
        out.append((("commissioning_order",), "Each system at most once."))
    return out


def current_system_problems(d: Mapping) -> list[Problem]:
    if len(set(d["hop_set"])) != len(d["hop_set"]):
        return [(("hop_set",), "Channels must not repeat.")]
    if d.get("sequence") is not None and set(d["sequence"]) != set(d["hop_set"]):
        return [(("sequence",), "Must visit exactly the channels of hop_set.")]
    return []


def mode_problems(d: Mapping) -> list[Problem]:
    if d.get("kind") == "budget" and d.get("max_changes") is None:
        return [(("max_changes",), "The budget mode needs max_changes.")]
    return []


def _plan_object_problems(d: Mapping) -> list[Problem]:
    out = []
    req = d.get("requirements")
    if req is not None:
        for i, r in enumerate(req.get("systems") or ()):
            out += under(("requirements", "systems", i), system_requirement_problems(r))
        out += under(("requirements",), requirements_problems(req))
    return out


def _replan_object_problems(d: Mapping) -> list[Problem]:
    out = _plan_object_problems(d)
    for i, c in enumerate(d["current"]["systems"]):
        out += under(("current", "systems", i), current_system_problems(c))
    if d.get("mode") is not None:
        out += under(("mode",), mode_problems(d["mode"]))
    return out


# --- building requests from the request form ---------------------------------

def baseline_names(names) -> tuple[str, ...]:
    """The baselines asked for, in order, once each; "all" stands for every one."""
    return tuple(BASELINES) if "all" in names else tuple(dict.fromkeys(names))


def _system_requirement(d: Mapping) -> SystemRequirement:
    return SystemRequirement(**{**d, "excluded_channels": tuple(d.get("excluded_channels") or ()),
                                "pinned_channels": tuple(d.get("pinned_channels") or ())})


def requirements_from(d: Mapping) -> PlanRequirements:
    """The requirements, search options and baselines of a plan or re-plan request form."""
    req = dict(d.get("requirements") or {})
    req["systems"] = tuple(_system_requirement(r) for r in req.get("systems") or ())
    if "commissioning_order" in req:
        req["commissioning_order"] = tuple(req["commissioning_order"] or ())
    return PlanRequirements(**req, **(d.get("search") or {}), baselines=baseline_names(d.get("baselines") or ()))


def _given(d: Mapping, *names: str) -> dict:
    return {n: d[n] for n in names if n in d}


def assessment_request_from(d: Mapping, site: Site) -> AssessmentRequest:
    sim = d.get("simulation")
    return AssessmentRequest(site=site, simulation=None if sim is None else SimulationRequest(**sim),
                             **_given(d, "detail"))


def plan_request_from(d: Mapping, site: Site) -> PlanRequest:
    return PlanRequest(site=site, requirements=requirements_from(d), **_given(d, "detail"))


def replan_request_from(d: Mapping, site: Site) -> ReplanRequest:
    current = tuple(CurrentSystem(c["system"], tuple(c["hop_set"]),
                                  None if c.get("sequence") is None else tuple(c["sequence"]))
                    for c in d["current"]["systems"])
    return ReplanRequest(site=site, current=current, requirements=requirements_from(d),
                         mode=ReplanMode(**(d.get("mode") or {})))


# --- rules on a built request --------------------------------------------------

def _requirement_references(site: Site, req: PlanRequirements) -> list[Problem]:
    out, ids = [], {s.id for s in site.systems}
    for i, r in enumerate(req.systems):
        if r.system not in ids:
            out.append((("requirements", "systems", i, "system"), f"Unknown system {r.system!r}."))
        for name in ("excluded_channels", "pinned_channels"):
            out += [(("requirements", "systems", i, name, j), f"Channel {c} is off the grid.")
                    for j, c in enumerate(getattr(r, name)) if c >= site.grid.count]
    out += [(("requirements", "commissioning_order", j), f"Unknown system {sid!r}.")
            for j, sid in enumerate(req.commissioning_order) if sid not in ids]
    return out


def _simulated_hops(site: Site, sequence_packets: int) -> list[Problem]:
    """sequence_packets x hops per packet stays within MAX_SIMULATED_HOPS for every system."""
    for s in site.systems:
        hops = (s.retry_limit + 1) * s.hops_per_attempt
        if sequence_packets * hops > MAX_SIMULATED_HOPS:
            return [(("search", "sequence_packets"),
                     f"{sequence_packets} packets of {hops} hops ({s.id!r}: retry_limit + 1 attempts of "
                     f"hops_per_attempt hops) exceed {MAX_SIMULATED_HOPS} simulated hops per system; "
                     f"at most {MAX_SIMULATED_HOPS // hops} packets here.")]
    return []


def _objective_needs(req: PlanRequirements) -> list[Problem]:
    """worst_margin is measured against the ceilings: at least one system must set one."""
    if req.objective == "worst_margin" and not any(r.max_residual_loss is not None or r.max_attempt_loss is not None
                                                   for r in req.systems):
        return [(("requirements", "objective"), "worst_margin needs a ceiling (max_residual_loss or "
                 "max_attempt_loss) on at least one system.")]
    return []


def plan_request_problems(req: PlanRequest | ReplanRequest) -> list[Problem]:
    return (_simulated_hops(req.site, req.requirements.sequence_packets)
            + _requirement_references(req.site, req.requirements) + _objective_needs(req.requirements))


def replan_request_problems(req: ReplanRequest) -> list[Problem]:
    out, seen = plan_request_problems(req), set()
    if req.requirements.objective not in LINEAR_OBJECTIVES:  # the re-plan's moves and target are linear
        out.append((("requirements", "objective"), f"Re-planning minimises per-hop collision: one of "
                    f"{', '.join(LINEAR_OBJECTIVES)} ({req.requirements.objective} is for plans only)."))
    for i, c in enumerate(req.current):
        if c.system in seen:
            out.append((("current", "systems", i, "system"), f"System {c.system!r} is listed twice."))
        seen.add(c.system)
        for name in ("hop_set", "sequence"):
            out += [(("current", "systems", i, name, j), f"Channel {ch} is off the grid.")
                    for j, ch in enumerate(getattr(c, name) or ()) if ch >= req.site.grid.count]
    return out


# --- loaders -------------------------------------------------------------------

def _site(d: Mapping) -> Site:
    try:
        return load_site(d["site"])
    except SiteError as err:
        raise err.under("/site") from None


def load_assessment_request(d: Mapping) -> AssessmentRequest:
    return assessment_request_from(d, _site(d))


def load_plan_request(d: Mapping) -> PlanRequest:
    site = _site(d)
    raise_site_error(_plan_object_problems(d))
    req = plan_request_from(d, site)
    raise_site_error(plan_request_problems(req))
    return req


def load_replan_request(d: Mapping) -> ReplanRequest:
    site = _site(d)
    raise_site_error(_replan_object_problems(d))
    req = replan_request_from(d, site)
    raise_site_error(replan_request_problems(req))
    return req
