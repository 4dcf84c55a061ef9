"""Every rule across the fields of a site, once, and `load_site`: a Site from a plain dict.

A problem is `(path, message)`, the path a tuple of keys and list indices
into the site's request form (`("systems", 2, "hop_set", 0)`); `pointer`
turns it into a JSON pointer. Rules come in three kinds, checked in this
order (a later kind may assume the earlier ones hold):

1. Object rules, on one object of the request form (a plain dict): a
   system's packet fits its dwell, a rician channel has its K-factor, an
   interferer gives its edges or its centre and width, ... The request
   schemas (`cohop.api.schemas.site`) call these from each object's schema.
2. Site rules, on the built `Site`: ids unique, references known, the
   profile's band, the grid inside the band, hop sets on the grid, one dwell
   per time-base group, link distances with propagation, surveys that reach
   a system, and the work caps across fields (`cohop.limits`).
3. Completeness, on a site that passed 2: every ordered pair of systems has
   a coupling loss (given either way, or from positions and propagation) and
   every fixed interferer a level at every system.

Field types and ranges are not checked here: they are the request schemas'
job. `load_site` (for tests, benchmarks and tools without the HTTP layer)
trusts them, runs the object rules, builds the Site (`cohop.site_form`) and
runs the site rules and completeness on it; `SiteSchema` does the same after
its field checks.
"""

from __future__ import annotations

import math
from typing import Iterable, Mapping

from cohop import limits
from cohop.errors import SiteError
from cohop.regulatory import PROFILES
from cohop.regulatory.profiles import unknown_profile_message
from cohop.physics.geometry import axis_sample_count
from cohop.site import MOBILITY_POLICIES, Band, Coupling, Grid, Site, Survey, System
from cohop.site_form import site_from

Problem = tuple[tuple, str]


def pointer(path: Iterable) -> str:
    """The JSON pointer (RFC 6901) of a path of keys and indices."""
    return "".join("/" + str(token).replace("~", "~0").replace("/", "~1") for token in path)


def under(prefix: tuple, problems: Iterable[Problem]) -> list[Problem]:
    return [(prefix + path, message) for path, message in problems]


def raise_site_error(problems: list[Problem], prefix: tuple = ()) -> None:
    if problems:
        raise SiteError([(pointer(prefix + path), message) for path, message in problems])


# --- 1. object rules (request form) ------------------------------------------

def _exactly_one(d: Mapping, names: tuple[str, str]) -> str | None:
    present = [n for n in names if d.get(n) is not None]
    return None if len(present) == 1 else f"Give exactly one of {names[0]} and {names[1]}."


def band_problems(d: Mapping) -> list[Problem]:
    return [(("high_hz",), "Must be above low_hz.")] if d["high_hz"] <= d["low_hz"] else []


def fading_problems(d: Mapping | str) -> list[Problem]:
    if isinstance(d, str):  # the model's name alone: shorthand for {"model": name} (site_form)
        d = {"model": d}
    k = d.get("k_factor_db")
    if d["model"] == "rician" and k is None:
        return [(("k_factor_db",), "A rician channel needs k_factor_db.")]
    if d["model"] != "rician" and k is not None:
        return [(("k_factor_db",), "Only a rician channel takes k_factor_db.")]
    return []


def traffic_problems(d: Mapping) -> list[Problem]:
    """A system's traffic object (`cohop.site.Traffic`)."""
    out = []
    if d.get("deadline_probability") is not None and d.get("deadline_s") is None:
        out.append((("deadline_probability",), "Needs deadline_s."))
    if d.get("max_stops_per_hour") is not None and d.get("watchdog_s") is None:
        out.append((("max_stops_per_hour",), "Needs watchdog_s."))
    watchdog, interval = d.get("watchdog_s"), d["message_interval_s"]
    if watchdog is not None and watchdog < interval:
        out.append((("watchdog_s",), "Must be at least message_interval_s: a shorter watchdog expires between "
                                     "any two messages."))
    elif watchdog is not None and math.ceil(watchdog / interval - 1e-9) > limits.MAX_WATCHDOG_MESSAGES:
        out.append((("watchdog_s",), f"Covers more than {limits.MAX_WATCHDOG_MESSAGES} message intervals; "
                                     "lengthen message_interval_s or shorten watchdog_s."))
    return out


def system_problems(d: Mapping) -> list[Problem]:
    out = []
    if d["packet_airtime_s"] > d["dwell_s"]:
        out.append((("packet_airtime_s",), "Must not exceed dwell_s: one packet fits in one dwell."))
    if msg := _exactly_one(d, ("wanted_signal_dbm", "link_distance_m")):
        out.append((("wanted_signal_dbm",), msg))
    if msg := _exactly_one(d, ("fade_margin_db", "sensitivity_dbm")):
        out.append((("fade_margin_db",), msg))
    table = d["rejection"]
    for i in range(1, len(table)):
        if table[i]["offset_hz"] <= table[i - 1]["offset_hz"]:
            out.append((("rejection", i, "offset_hz"), "Offsets must increase."))
        if table[i]["rejection_db"] < table[i - 1]["rejection_db"]:
            out.append((("rejection", i, "rejection_db"), "Rejection must not decrease with offset."))
    out += placement_problems(d)
    hs, seq = d.get("hop_set"), d.get("sequence")
    if hs is not None and len(set(hs)) != len(hs):
        out.append((("hop_set",), "Channels must not repeat."))
    if seq is not None and hs is not None and set(seq) != set(hs):
        out.append((("sequence",), "Must visit exactly the channels of hop_set."))
    return out


# systems that move: where a system is -------------------------------------

PLACEMENTS = ("position", "positions", "area")


def area_point_count(d: Mapping) -> int:
    """Grid points of an area in request form (`cohop.site.Area.points` builds them)."""
    return (axis_sample_count(d["x_min_m"], d["x_max_m"], d["step_m"])
            * axis_sample_count(d["y_min_m"], d["y_max_m"], d["step_m"]))


def area_problems(d: Mapping) -> list[Problem]:
    out = [((f"{axis}_max_m",), f"Must not be below {axis}_min_m.")
           for axis in ("x", "y") if d[f"{axis}_max_m"] < d[f"{axis}_min_m"]]
    if not out and (n := area_point_count(d)) > limits.MAX_AREA_POINTS:
        out.append((("step_m",), f"The area is sampled at {n} grid points; at most {limits.MAX_AREA_POINTS}: "
                                 "raise step_m or give positions."))
    return out


def placement_problems(d: Mapping) -> list[Problem]:
    """A system is at one position, at several (it moves), over an area (sampled), or nowhere given."""
    given = [name for name in PLACEMENTS if d.get(name) is not None]
    if len(given) > 1:
        return [((given[1],), "Give at most one of position, positions and area.")]
    return under(("area",), area_problems(d["area"])) if given == ["area"] else []


def propagation_problems(d: Mapping) -> list[Problem]:
    if d["model"] == "log_distance" and d.get("exponent") is None:
        return [(("exponent",), "log_distance needs exponent.")]
    if d["model"] == "p1238" and d.get("environment") is None and d.get("power_loss_coefficient") is None:
        return [(("environment",), "p1238 needs environment or power_loss_coefficient.")]
    return []


def coupling_entry_problems(d: Mapping) -> list[Problem]:
    return [(("to_system",), "A system does not couple to itself.")] if d["from_system"] == d["to_system"] else []


def interferer_problems(d: Mapping) -> list[Problem]:
    given = {k for k in ("low_hz", "high_hz", "centre_hz", "width_hz", "burst_s", "period_s") if d.get(k) is not None}
    edges = bool(given & {"low_hz", "high_hz"})
    centred = bool(given & {"centre_hz", "width_hz"})
    out = []
    if edges == centred:
        out.append((("low_hz",), "Give either low_hz and high_hz, or centre_hz and width_hz."))
    elif edges and not {"low_hz", "high_hz"} <= given:
        out.append((("high_hz",), "Give both low_hz and high_hz."))
    elif centred and not {"centre_hz", "width_hz"} <= given:
        out.append((("width_hz",), "Give both centre_hz and width_hz."))
    elif edges and d["high_hz"] < d["low_hz"]:
        out.append((("high_hz",), "Must not be below low_hz."))
    if ("burst_s" in given) != ("period_s" in given):
        out.append((("period_s",), "Give both burst_s and period_s, or neither."))
    elif "burst_s" in given and d["burst_s"] > d["period_s"]:
        out.append((("burst_s",), "Must not exceed period_s."))
    return out


def survey_problems(d: Mapping) -> list[Problem]:
    out = []
    if msg := _exactly_one(d, ("applies_to", "position")):
        out.append((("applies_to",), msg))
    f = d["frequencies_hz"]
    for i in range(1, len(f)):
        if f[i] <= f[i - 1]:
            out.append((("frequencies_hz", i), "Frequencies must strictly increase (sorted, no duplicates)."))
            break
    if len(d["levels_dbm"]) != len(f):
        out.append((("levels_dbm",), f"Needs one level per frequency ({len(f)})."))
    occ = d.get("occupancy_fraction")
    if occ is not None and len(occ) != len(f):
        out.append((("occupancy_fraction",), f"Needs one share per frequency ({len(f)})."))
    return out


def object_problems(d: Mapping) -> list[Problem]:
    """The object rules of every object of a site in request form."""
    out = []
    if d.get("band") is not None:
        out += under(("band",), band_problems(d["band"]))
    for i, s in enumerate(d["systems"]):
        if s.get("fading") is not None:
            out += under(("systems", i, "fading"), fading_problems(s["fading"]))
        if s.get("traffic") is not None:
            out += under(("systems", i, "traffic"), traffic_problems(s["traffic"]))
        out += under(("systems", i), system_problems(s))
    coupling = d.get("coupling") or {}
    if coupling.get("propagation") is not None:
        out += under(("coupling", "propagation"), propagation_problems(coupling["propagation"]))
    for j, e in enumerate(coupling.get("entries") or ()):
        out += under(("coupling", "entries", j), coupling_entry_problems(e))
    for k, itf in enumerate(d.get("interferers") or ()):
        out += under(("interferers", k), interferer_problems(itf))
    for k, sv in enumerate(d.get("surveys") or ()):
        out += under(("surveys", k), survey_problems(sv))
    return out


# --- surveys: whose receivers a trace stands for ------------------------------

def survey_distance_m(survey: Survey, system: System) -> float | None:
    """Horizontal distance from a position survey to a system's receivers (the nearest of a moving system's
    positions on the survey's floor); None off its floor or unknown."""
    if survey.position is None:
        return None
    here = [p for p in system.sampled_positions() if p.floor == survey.position.floor]
    if not here:
        return None
    return min(math.hypot(p.x_m - survey.position.x_m, p.y_m - survey.position.y_m) for p in here)


def stands_for(survey: Survey, systems: tuple[System, ...]) -> tuple[str, ...]:
    """The systems whose receivers the survey describes: those it names, or those within its radius."""
    if survey.position is None:
        return survey.applies_to
    return tuple(s.id for s in systems if (d := survey_distance_m(survey, s)) is not None and d <= survey.radius_m)


# --- 2. site rules ------------------------------------------------------------

def _ids(systems, interferers) -> tuple[list[Problem], set[str]]:
    out, seen = [], set()
    for i, s in enumerate(systems):
        if s.id in seen:
            out.append((("systems", i, "id"), f"Duplicate id {s.id!r}."))
        seen.add(s.id)
    system_ids = set(seen)
    for k, itf in enumerate(interferers):
        if itf.id in seen:
            out.append((("interferers", k, "id"), f"Duplicate id {itf.id!r} (ids are shared with systems)."))
        seen.add(itf.id)
    return out, system_ids


def effective_band(site: Site) -> Band | None:
    """The request's band if given, else the profile's; None when neither gives one."""
    if site.band is not None:
        return site.band
    profile = PROFILES.get(site.profile)
    return None if profile is None else profile.band


def _band(site: Site) -> list[Problem]:
    profile = PROFILES.get(site.profile)
    if profile is None:
        return [(("profile",), unknown_profile_message(site.profile))]
    if profile.band is None:
        return [(("band",), f"Profile {site.profile!r} needs band edges.")] if site.band is None else []
    band = site.band
    if band is not None and (band.low_hz < profile.band.low_hz or band.high_hz > profile.band.high_hz):
        return [(("band",), f"Must lie inside the profile's band {profile.band.low_hz:g}-{profile.band.high_hz:g} Hz.")]
    return []


def _grid(grid: Grid, band: Band) -> list[Problem]:
    out = []
    if grid.first_centre_hz < band.low_hz:
        out.append((("grid", "first_centre_hz"), f"Channel 0 at {grid.first_centre_hz:g} Hz lies below the band "
                                                 f"({band.low_hz:g} Hz)."))
    if grid.last_centre_hz > band.high_hz:
        out.append((("grid", "count"), f"Channel {grid.count - 1} at {grid.last_centre_hz:g} Hz lies above the band "
                                       f"({band.high_hz:g} Hz)."))
    return out


def _hop_sets(systems, grid: Grid) -> list[Problem]:
    return [(("systems", i, name, j), f"Channel {c} is off the grid (0-{grid.count - 1}).")
            for i, s in enumerate(systems) for name in ("hop_set", "sequence")
            for j, c in enumerate(getattr(s, name) or ()) if c >= grid.count]


def _groups(systems) -> list[Problem]:
    out, dwell = [], {}
    for i, s in enumerate(systems):
        g = s.time_base_group
        if g is None:
            continue
        if g in dwell and abs(dwell[g] - s.dwell_s) > 1e-12 * max(1.0, dwell[g]):
            out.append((("systems", i, "dwell_s"), f"Systems of time-base group {g!r} must share one dwell_s."))
        dwell.setdefault(g, s.dwell_s)
    return out


def _coupling_references(coupling: Coupling, ids: set[str]) -> list[Problem]:
    out, seen = [], set()
    for j, e in enumerate(coupling.entries):
        for name in ("from_system", "to_system"):
            if getattr(e, name) not in ids:
                out.append((("coupling", "entries", j, name), f"Unknown system {getattr(e, name)!r}."))
        if (e.from_system, e.to_system) in seen:
            out.append((("coupling", "entries", j), f"Duplicate entry {e.from_system}->{e.to_system}."))
        seen.add((e.from_system, e.to_system))
    return out


def _link_distances(systems, coupling: Coupling) -> list[Problem]:
    if coupling.propagation is not None:
        return []
    message = "A link distance needs coupling.propagation to compute the wanted signal."
    return [(("systems", i, "link_distance_m"), message)
            for i, s in enumerate(systems) if s.link_distance_m is not None]


def _interferer_references(interferers, ids: set[str]) -> list[Problem]:
    out = []
    for k, itf in enumerate(interferers):
        seen = set()
        for j, lv in enumerate(itf.levels):
            if lv.system not in ids:
                out.append((("interferers", k, "levels", j, "system"), f"Unknown system {lv.system!r}."))
            if lv.system in seen:
                out.append((("interferers", k, "levels", j, "system"), f"Duplicate level for {lv.system!r}."))
            seen.add(lv.system)
    return out


def _nobody_near(survey: Survey, systems) -> str:
    found = [(d, s.id) for s in systems if (d := survey_distance_m(survey, s)) is not None]
    where = f"within {survey.radius_m:g} m on floor {survey.position.floor}"
    if not found:
        return f"No system with a position on floor {survey.position.floor}: the survey stands for nobody."
    d, sid = min(found)
    return f"No system's receivers lie {where}; the nearest is {sid!r} at {d:.1f} m (raise radius_m or use applies_to)."


def _surveys(surveys, ids: set[str], systems) -> list[Problem]:
    out, seen = [], set()
    for k, sv in enumerate(surveys):
        if sv.id in seen:
            out.append((("surveys", k, "id"), f"Duplicate survey id {sv.id!r}."))
        seen.add(sv.id)
        for j, sid in enumerate(sv.applies_to):
            if sid not in ids:
                out.append((("surveys", k, "applies_to", j), f"Unknown system {sid!r}."))
        if sv.position is not None and not stands_for(sv, systems):
            out.append((("surveys", k, "position"), _nobody_near(sv, systems)))
    return out


def overlap_count(victim_airtime_s: float, burst_s: float, period_s: float) -> int:
    """Most bursts of a source (burst_s every period_s) that one packet of the victim can overlap."""
    return math.ceil((victim_airtime_s + burst_s) / period_s)


def _overlaps(systems, interferers) -> list[Problem]:
    """(T_v + T_a) / D_a and (T_v + burst) / period stay within MAX_OVERLAPS for every unaligned pair."""
    cap, out = limits.MAX_OVERLAPS, []
    for a, src in enumerate(systems):
        others = [v for i, v in enumerate(systems) if i != a and (
            src.time_base_group is None or v.time_base_group != src.time_base_group)]
        if not others:
            continue
        victim = max(others, key=lambda v: v.packet_airtime_s)
        k = overlap_count(victim.packet_airtime_s, src.packet_airtime_s, src.dwell_s)
        if k > cap:
            out.append((("systems", a, "dwell_s"),
                        f"A packet of {victim.id!r} ({victim.packet_airtime_s:g} s) overlaps up to {k} of this "
                        f"system's dwells; at most {cap} are modelled: check dwell_s and the packet airtimes."))
    if not systems:
        return out
    longest = max(systems, key=lambda v: v.packet_airtime_s)
    for k_, itf in enumerate(interferers):
        if itf.burst_s is None:
            continue
        k = overlap_count(longest.packet_airtime_s, itf.burst_s, itf.period_s)
        if k > cap:
            out.append((("interferers", k_, "period_s"),
                        f"A packet of {longest.id!r} ({longest.packet_airtime_s:g} s) overlaps up to {k} of these "
                        f"bursts; at most {cap} are modelled: give the interferer as continuous (no burst_s or "
                        f"period_s) with activity_fraction {itf.activity_fraction * itf.burst_s / itf.period_s:.3g} "
                        "instead."))
    return out


def survey_work(survey: Survey, systems: tuple, channel_count: int) -> int:
    """Integration work of one survey: distinct system bandwidths it stands for x (points + channels)."""
    ids = set(stands_for(survey, systems))
    widths = {s.bandwidth_hz for s in systems if s.id in ids}
    return len(widths) * (len(survey.frequencies_hz) + channel_count)


def _survey_totals(surveys, systems: tuple, channel_count: int) -> list[Problem]:
    points = sum(len(s.frequencies_hz) for s in surveys)
    if points > limits.MAX_SURVEY_POINTS_TOTAL:
        return [(("surveys",), f"The surveys hold {points} points together; at most {limits.MAX_SURVEY_POINTS_TOTAL}.")]
    work = sum(survey_work(s, systems, channel_count) for s in surveys)
    if work > limits.MAX_SURVEY_WORK:
        return [(("surveys",), f"Integrating the surveys over every system's bandwidth takes {work} point-channel "
                               f"steps; at most {limits.MAX_SURVEY_WORK}: thin the traces or apply each survey to "
                               "fewer systems.")]
    return []


def _mobility(site: Site) -> list[Problem]:
    """A known policy, and the work caps of moving systems: sampled positions and position pairs."""
    if site.mobility_policy not in MOBILITY_POLICIES:
        return [(("mobility_policy",), f"Unknown policy {site.mobility_policy!r}; one of {MOBILITY_POLICIES}.")]
    counts = [len(s.sampled_positions()) for s in site.systems]
    total = sum(counts)
    if total > limits.MAX_SAMPLED_POSITIONS:
        return [(("systems",), f"The systems hold {total} sampled positions together; at most "
                               f"{limits.MAX_SAMPLED_POSITIONS}: give fewer positions or coarser areas.")]
    pairs = total * total - sum(n * n for n in counts)
    if pairs > limits.MAX_POSITION_PAIRS:
        return [(("systems",), f"Coupling between the systems' positions takes {pairs} path losses; at most "
                               f"{limits.MAX_POSITION_PAIRS}: give fewer positions or coarser areas.")]
    return []


def _consistency(site: Site) -> list[Problem]:
    out, ids = _ids(site.systems, site.interferers)
    band = _band(site)
    out += band or _grid(site.grid, effective_band(site))  # a grid is checked against a band that holds
    out += _hop_sets(site.systems, site.grid)
    out += _groups(site.systems)
    out += _coupling_references(site.coupling, ids)
    out += _link_distances(site.systems, site.coupling)
    out += _interferer_references(site.interferers, ids)
    out += _surveys(site.surveys, ids, site.systems)
    out += _overlaps(site.systems, site.interferers)
    out += _survey_totals(site.surveys, site.systems, site.grid.count)
    out += _mobility(site)
    return out


# --- 3. completeness ----------------------------------------------------------

def _missing_coupling(site: Site) -> list[Problem]:
    given = {(e.from_system, e.to_system) for e in site.coupling.entries}
    given |= {(t, f) for f, t in given}  # an entry holds both ways unless the reverse is given too
    prop = site.coupling.propagation
    missing = [f"{a.id}->{v.id}" for a in site.systems for v in site.systems
               if a is not v and (a.id, v.id) not in given
               and (prop is None or not a.sampled_positions() or not v.sampled_positions())]
    if not missing:
        return []
    more = f" and {len(missing) - 10} more" if len(missing) > 10 else ""
    return [(("coupling",), f"no coupling loss for {', '.join(missing[:10])}{more}: give an entry, or positions "
                            "(position, positions or area) for both systems and a propagation model")]


#: The level an interferer has at a receiver it is taken not to reach: `levels[]` does not list the system and
#: the level cannot be computed (README, "Site"). The schema's lowest received level, far below any noise floor.
NOT_RECEIVED_DBM = limits.SIGNAL_DBM.minimum


def level_computable(site: Site, itf, system) -> bool:
    """Whether an interferer's level at `system` can be computed: eirp_dbm, its position, the system's
    position(s) and a propagation model."""
    return (itf.eirp_dbm is not None and itf.position is not None and site.coupling.propagation is not None
            and bool(system.sampled_positions()))


def not_received(site: Site) -> list[tuple[str, list[str]]]:
    """(interferer id, system ids) for each interferer that lists levels but not these systems, whose level
    cannot be computed either: the interferer is taken as not received there (NOT_RECEIVED_DBM)."""
    out = []
    for itf in site.interferers:
        given = {lv.system for lv in itf.levels}
        if not given:
            continue
        unheard = [s.id for s in site.systems if s.id not in given and not level_computable(site, itf, s)]
        if unheard:
            out.append((itf.id, unheard))
    return out


def _missing_levels(site: Site) -> list[Problem]:
    """An interferer with no level anywhere: neither levels[] nor what computes one, for some system."""
    out = []
    for k, itf in enumerate(site.interferers):
        if itf.levels:
            continue  # systems it does not list are not received there (not_received)
        missing = [s.id for s in site.systems if not level_computable(site, itf, s)]
        if missing:
            names = ", ".join(repr(m) for m in missing[:10]) + (f" and {len(missing) - 10} more"
                                                                if len(missing) > 10 else "")
            out.append((("interferers", k), f"no level for system {names}: give levels (a system they do not "
                                            "list does not receive the interferer), or eirp_dbm and "
                                            "positions with a propagation model"))
    return out


def site_problems(site: Site) -> list[Problem]:
    """The site rules (2), then, if they all hold, completeness (3)."""
    return _consistency(site) or (_missing_coupling(site) + _missing_levels(site))


def load_site(data: Mapping) -> Site:
    """The Site of a plain dict in the request's form, with every rule above checked: SiteError with
    pointers relative to the site. Types and ranges are trusted (the request schemas check them)."""
    problems = object_problems(data)
    raise_site_error(problems)
    site = site_from(data)
    raise_site_error(site_problems(site))
    return site
