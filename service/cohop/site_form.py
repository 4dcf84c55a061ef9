"""A Site from its request form: the plain dict a request's "site" holds (JSON types, SI units).

No rule is checked here (`cohop.site_rules` does that, and `load_site` there builds through this); absent
optional fields take the defaults of the `cohop.site` dataclasses, which the request schemas show too.
"""

from __future__ import annotations

from typing import Mapping

from cohop.site import (Area, Band, Coupling, CouplingEntry, Fading, Grid, Interferer, InterfererLevel, Position,
                        Propagation, RejectionPoint, Site, Survey, System, Traffic)


def _position(d: Mapping | None) -> Position | None:
    return None if d is None else Position(**d)


def system_from(d: Mapping) -> System:
    d = dict(d)
    d["rejection"] = tuple(RejectionPoint(**p) for p in d["rejection"])
    fading = d.pop("fading", None)
    if fading is not None:  # the model's name alone is shorthand for {"model": name}
        d["fading"] = Fading(model=fading) if isinstance(fading, str) else Fading(**fading)
    d["position"] = _position(d.get("position"))
    if d.get("positions") is not None:  # a system that moves
        d["positions"] = tuple(Position(**p) for p in d["positions"])
    if d.get("area") is not None:
        d["area"] = Area(**d["area"])
    if d.get("traffic") is not None:
        d["traffic"] = Traffic(**d["traffic"])
    if d.get("sequence") is not None:
        d["sequence"] = tuple(d["sequence"])
        if d.get("hop_set") is None:  # the hop set of a sequence is its channels
            d["hop_set"] = tuple(sorted(set(d["sequence"])))
    if d.get("hop_set") is not None:
        d["hop_set"] = tuple(d["hop_set"])
    return System(**d)


def coupling_from(d: Mapping | None) -> Coupling:
    if d is None:
        return Coupling()
    prop = d.get("propagation")
    return Coupling(propagation=None if prop is None else Propagation(**prop),
                    entries=tuple(CouplingEntry(**e) for e in d.get("entries") or ()))


def interferer_from(d: Mapping) -> Interferer:
    d = dict(d)
    if d.get("centre_hz") is not None:
        half, centre = d.pop("width_hz") / 2, d.pop("centre_hz")
        d["low_hz"], d["high_hz"] = centre - half, centre + half
    d["levels"] = tuple(InterfererLevel(**lv) for lv in d.get("levels") or ())
    d["position"] = _position(d.get("position"))
    return Interferer(**d)


def survey_from(d: Mapping) -> Survey:
    d = dict(d)
    d["applies_to"] = tuple(d.get("applies_to") or ())
    d["frequencies_hz"], d["levels_dbm"] = tuple(d["frequencies_hz"]), tuple(d["levels_dbm"])
    if d.get("occupancy_fraction") is not None:
        d["occupancy_fraction"] = tuple(d["occupancy_fraction"])
    d["position"] = _position(d.get("position"))
    return Survey(**d)


def site_from(d: Mapping) -> Site:
    """The Site a request-form dict describes (no rule checked; defaults are the dataclasses')."""
    plain = {k: d[k] for k in ("profile", "name", "rms_delay_spread_s") if k in d}
    if d.get("mobility_policy") is not None:  # systems that move
        plain["mobility_policy"] = d["mobility_policy"]
    return Site(**plain, grid=Grid(**d["grid"]), band=None if d.get("band") is None else Band(**d["band"]),
                systems=tuple(system_from(s) for s in d["systems"]), coupling=coupling_from(d.get("coupling")),
                interferers=tuple(interferer_from(i) for i in d.get("interferers") or ()),
                surveys=tuple(survey_from(s) for s in d.get("surveys") or ()))
