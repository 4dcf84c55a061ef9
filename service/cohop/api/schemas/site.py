"""Request schemas for a site description; they load into cohop.site dataclasses.

Field checks live on the fields; checks that relate fields of one object live
in that object's `validates_schema`; checks across the site (ids, references,
grid against band, hop sets against grid) live in `SiteSchema`.
"""

from __future__ import annotations

import marshmallow as ma
from marshmallow import fields, post_load, pre_load, validate, validates_schema

from cohop import limits
from cohop import surveys as surveys_domain
from cohop.api.schemas import bounds
from cohop.api.schemas.fields import IDENTIFIER, Count, List, Number, Text
from cohop.regulatory import PROFILES
from cohop.site import (Band, Coupling, CouplingEntry, Fading, Grid, Interferer, InterfererLevel, Position,
                        Propagation, RejectionPoint, Site, Survey, System)

FADING_MODELS = ("rayleigh", "rician", "none")
PROPAGATION_MODELS = ("free_space", "log_distance", "p1238")
P1238_ENVIRONMENTS = ("residential", "office", "commercial")


class ErrorTree:
    """Collects messages at paths and raises one ValidationError for all of them."""

    def __init__(self):
        self.tree: dict = {}

    def add(self, path: tuple, message: str) -> None:
        node = self.tree
        for key in path[:-1]:
            node = node.setdefault(key, {})
        node.setdefault(path[-1], []).append(message)

    def raise_if_any(self) -> None:
        if self.tree:
            raise ma.ValidationError(self.tree)


class StrictSchema(ma.Schema):
    class Meta:
        unknown = ma.RAISE
        ordered = True

    @pre_load
    def _few_unknown(self, data, **kwargs):
        """An object with a flood of unknown keys costs a bounded error list, not one error per key."""
        if not isinstance(data, dict) or len(data) <= len(self.load_fields) + limits.MAX_FIELD_ERRORS:
            return data
        known = {f.data_key or name for name, f in self.load_fields.items()}
        unknown = [k for k in data if k not in known]
        errors = {k: ["Unknown field."] for k in unknown[:limits.MAX_FIELD_ERRORS]}
        errors["_schema"] = [f"{len(unknown)} unknown fields; the object was not read further."]
        raise ma.ValidationError(errors)


def channel_index() -> Count:
    return Count(limits.CHANNEL_INDEX)


class BandSchema(StrictSchema):
    low_hz = Number(limits.FREQUENCY_HZ, required=True)
    high_hz = Number(limits.FREQUENCY_HZ, required=True)

    @validates_schema
    def _order(self, data, **kwargs):
        if data["high_hz"] <= data["low_hz"]:
            raise ma.ValidationError("Must be above low_hz.", field_name="high_hz")

    @post_load
    def _make(self, data, **kwargs):
        return Band(**data)


class GridSchema(StrictSchema):
    first_centre_hz = Number(limits.FREQUENCY_HZ, required=True,
                             metadata={"description": "Centre of channel 0."})
    spacing_hz = Number(limits.CHANNEL_SPACING_HZ, required=True)
    count = Count(required=True, validate=validate.Range(min=1, max=limits.MAX_CHANNELS))

    @post_load
    def _make(self, data, **kwargs):
        return Grid(**data)


class RejectionPointSchema(StrictSchema):
    offset_hz = Number(limits.REJECTION_OFFSET_HZ, required=True)
    rejection_db = Number(limits.REJECTION_DB, required=True)

    @post_load
    def _make(self, data, **kwargs):
        return RejectionPoint(**data)


class FadingSchema(StrictSchema):
    model = Text(required=True, validate=validate.OneOf(FADING_MODELS))
    k_factor_db = Number(limits.K_FACTOR_DB, metadata={"description": "Rician K-factor; rician only."})

    @validates_schema
    def _k(self, data, **kwargs):
        if data["model"] == "rician" and "k_factor_db" not in data:
            raise ma.ValidationError("A rician channel needs k_factor_db.", field_name="k_factor_db")
        if data["model"] != "rician" and "k_factor_db" in data:
            raise ma.ValidationError("Only a rician channel takes k_factor_db.", field_name="k_factor_db")

    @post_load
    def _make(self, data, **kwargs):
        return Fading(**data)


class PositionSchema(StrictSchema):
    x_m = Number(limits.COORDINATE_M, required=True)
    y_m = Number(limits.COORDINATE_M, required=True)
    floor = Count(limits.FLOOR, load_default=0)

    @post_load
    def _make(self, data, **kwargs):
        return Position(**data)


def _exactly_one(data: dict, names: tuple[str, str]) -> str | None:
    present = [n for n in names if data.get(n) is not None]
    if len(present) == 1:
        return None
    return f"Give exactly one of {names[0]} and {names[1]}."


class SystemSchema(StrictSchema):
    id = Text(required=True, validate=IDENTIFIER)
    label = Text(load_default="", validate=validate.Length(max=limits.MAX_TEXT_CHARS))
    tx_power_dbm = Number(limits.TX_POWER_DBM, required=True,
                          metadata={"description": "Conducted transmit power."})
    antenna_gain_dbi = Number(limits.ANTENNA_GAIN_DBI, load_default=0.0)
    bandwidth_hz = Number(limits.BANDWIDTH_HZ, required=True, metadata={"description": "Occupied (20 dB) bandwidth."})
    dwell_s = Number(limits.DWELL_S, required=True)
    packet_airtime_s = Number(limits.AIRTIME_S, required=True,
                              metadata={"description": "Airtime of one packet (one per dwell); at most dwell_s."})
    activity_fraction = Number(limits.FRACTION, required=True,
                               metadata={"description": "Share of dwells in which it transmits."})
    required_sir_db = Number(limits.SIR_DB, required=True,
                             metadata={"description": "Co-channel capture ratio the demodulator needs."})
    rejection = List(fields.Nested(RejectionPointSchema), required=True, min_length=1,
                     max_length=limits.MAX_REJECTION_POINTS,
                            metadata={"description": "Adjacent-channel rejection: offsets increasing, "
                                                     "rejection non-decreasing; stepped between entries."})
    wanted_signal_dbm = Number(limits.SIGNAL_DBM)
    link_distance_m = Number(limits.LINK_DISTANCE_M)
    fade_margin_db = Number(limits.FADE_MARGIN_DB)
    sensitivity_dbm = Number(limits.SIGNAL_DBM)
    noise_figure_db = Number(limits.NOISE_FIGURE_DB)
    fading = fields.Nested(FadingSchema, load_default=None)
    retry_limit = Count(limits.RETRY_LIMIT, required=True)
    hops_per_attempt = Count(limits.HOPS_PER_ATTEMPT, load_default=1,
                             metadata={"description": "Hops one attempt needs (e.g. 2 for data and acknowledgement)."})
    priority_weight = Number(limits.PRIORITY_WEIGHT, load_default=1.0)
    position = fields.Nested(PositionSchema, load_default=None)
    time_base_group = Text(load_default=None, validate=IDENTIFIER,
                           metadata={"description": "Systems in one group have slot-aligned dwells."})
    hop_set = List(channel_index(), load_default=None, min_length=1, max_length=limits.MAX_CHANNELS,
                          metadata={"description": "Grid channel indices the system hops over."})
    sequence = List(channel_index(), load_default=None, min_length=1, max_length=limits.MAX_SEQUENCE_HOPS,
                           metadata={"description": "The hop order its radios use (one period of channel "
                                                    "indices); the hop set is its channels."})
    fixed_point_to_point = fields.Boolean(load_default=False, truthy={True}, falsy={False}, metadata={"description": (
        "Used exclusively for fixed point-to-point links: 47 CFR 15.247(c)(1) then relaxes the antenna-gain "
        "reduction (2400-2483.5 MHz: 1 dB per 3 dB above 6 dBi; 5725-5850 MHz: none); elsewhere a finding says "
        "it changes nothing.")})

    @validates_schema
    def _consistent(self, data, **kwargs):
        errors = ErrorTree()
        if data["packet_airtime_s"] > data["dwell_s"]:
            errors.add(("packet_airtime_s",), "Must not exceed dwell_s: one packet fits in one dwell.")
        if msg := _exactly_one(data, ("wanted_signal_dbm", "link_distance_m")):
            errors.add(("wanted_signal_dbm",), msg)
        if msg := _exactly_one(data, ("fade_margin_db", "sensitivity_dbm")):
            errors.add(("fade_margin_db",), msg)
        table = data["rejection"]
        for i in range(1, len(table)):
            if table[i].offset_hz <= table[i - 1].offset_hz:
                errors.add(("rejection", i, "offset_hz"), "Offsets must increase.")
            if table[i].rejection_db < table[i - 1].rejection_db:
                errors.add(("rejection", i, "rejection_db"), "Rejection must not decrease with offset.")
        hs = data.get("hop_set")
        if hs is not None and len(set(hs)) != len(hs):
            errors.add(("hop_set",), "Channels must not repeat.")
        seq = data.get("sequence")
        if seq is not None and hs is not None and set(seq) != set(hs):
            errors.add(("sequence",), "Must visit exactly the channels of hop_set.")
        errors.raise_if_any()

    @post_load
    def _make(self, data, **kwargs):
        data["rejection"] = tuple(data["rejection"])
        data["fading"] = data["fading"] or Fading()
        if data["sequence"] is not None:
            data["sequence"] = tuple(data["sequence"])
            if data["hop_set"] is None:
                data["hop_set"] = tuple(sorted(set(data["sequence"])))
        if data["hop_set"] is not None:
            data["hop_set"] = tuple(data["hop_set"])
        return System(**data)


class PropagationSchema(StrictSchema):
    model = Text(required=True, validate=validate.OneOf(PROPAGATION_MODELS))
    exponent = Number(limits.PATH_LOSS_EXPONENT, metadata={"description": "log_distance: path-loss exponent n."})
    reference_loss_db = Number(limits.REFERENCE_LOSS_DB,
                               metadata={"description": "log_distance: loss at the reference distance "
                                                        "(default: free-space loss there)."})
    reference_distance_m = Number(limits.REFERENCE_DISTANCE_M, load_default=1.0)
    environment = Text(validate=validate.OneOf(P1238_ENVIRONMENTS), metadata={"description": "p1238 table row."})
    power_loss_coefficient = Number(limits.POWER_LOSS_COEFFICIENT,
                                    metadata={"description": "p1238: N, overriding the table."})
    floor_loss_db = Number(limits.FLOOR_LOSS_DB,
                           metadata={"description": "Loss per floor crossed (p1238: overrides the table Lf(n))."})
    floor_height_m = Number(limits.FLOOR_HEIGHT_M, load_default=4.0)
    margin_db = Number(limits.PROPAGATION_MARGIN_DB, load_default=0.0,
                       metadata={"description": "Planning allowance: lowers computed coupling losses and "
                                                "raises computed link losses."})

    @validates_schema
    def _needs(self, data, **kwargs):
        if data["model"] == "log_distance" and "exponent" not in data:
            raise ma.ValidationError("log_distance needs exponent.", field_name="exponent")
        if data["model"] == "p1238" and "environment" not in data and "power_loss_coefficient" not in data:
            raise ma.ValidationError("p1238 needs environment or power_loss_coefficient.", field_name="environment")

    @post_load
    def _make(self, data, **kwargs):
        return Propagation(**data)


class CouplingEntrySchema(StrictSchema):
    from_system = Text(required=True, validate=IDENTIFIER)
    to_system = Text(required=True, validate=IDENTIFIER)
    loss_db = Number(limits.COUPLING_LOSS_DB, required=True,
                     metadata={"description": "Transmitter output to receiver input, antennas and cables "
                                              "included; holds both ways unless the reverse is also given."})

    @validates_schema
    def _distinct(self, data, **kwargs):
        if data["from_system"] == data["to_system"]:
            raise ma.ValidationError("A system does not couple to itself.", field_name="to_system")

    @post_load
    def _make(self, data, **kwargs):
        return CouplingEntry(**data)


class CouplingSchema(StrictSchema):
    propagation = fields.Nested(PropagationSchema, load_default=None)
    entries = List(fields.Nested(CouplingEntrySchema), load_default=list, max_length=limits.MAX_COUPLING_ENTRIES)

    @post_load
    def _make(self, data, **kwargs):
        return Coupling(propagation=data["propagation"], entries=tuple(data["entries"]))


class InterfererLevelSchema(StrictSchema):
    system = Text(required=True, validate=IDENTIFIER)
    level_dbm = Number(limits.SIGNAL_DBM, required=True,
                       metadata={"description": "Total power at the system's receiver input."})

    @post_load
    def _make(self, data, **kwargs):
        return InterfererLevel(**data)


class InterfererSchema(StrictSchema):
    id = Text(required=True, validate=IDENTIFIER)
    label = Text(load_default="", validate=validate.Length(max=limits.MAX_TEXT_CHARS))
    low_hz = Number(limits.FREQUENCY_HZ)
    high_hz = Number(limits.FREQUENCY_HZ)
    centre_hz = Number(limits.FREQUENCY_HZ)
    width_hz = Number(limits.INTERFERER_WIDTH_HZ)
    levels = List(fields.Nested(InterfererLevelSchema), load_default=list, max_length=limits.MAX_SYSTEMS)
    eirp_dbm = Number(limits.EIRP_DBM)
    position = fields.Nested(PositionSchema, load_default=None)
    activity_fraction = Number(limits.FRACTION, load_default=1.0)
    burst_s = Number(limits.BURST_S)
    period_s = Number(limits.PERIOD_S)

    @validates_schema
    def _consistent(self, data, **kwargs):
        errors = ErrorTree()
        edges = "low_hz" in data or "high_hz" in data
        centred = "centre_hz" in data or "width_hz" in data
        if edges == centred:
            errors.add(("low_hz",), "Give either low_hz and high_hz, or centre_hz and width_hz.")
        elif edges and not ("low_hz" in data and "high_hz" in data):
            errors.add(("high_hz",), "Give both low_hz and high_hz.")
        elif centred and not ("centre_hz" in data and "width_hz" in data):
            errors.add(("width_hz",), "Give both centre_hz and width_hz.")
        elif edges and data["high_hz"] < data["low_hz"]:
            errors.add(("high_hz",), "Must not be below low_hz.")
        if ("burst_s" in data) != ("period_s" in data):
            errors.add(("period_s",), "Give both burst_s and period_s, or neither.")
        elif "burst_s" in data and data["burst_s"] > data["period_s"]:
            errors.add(("burst_s",), "Must not exceed period_s.")
        errors.raise_if_any()

    @post_load
    def _make(self, data, **kwargs):
        if "centre_hz" in data:
            half = data.pop("width_hz") / 2
            centre = data.pop("centre_hz")
            data["low_hz"], data["high_hz"] = centre - half, centre + half
        data["levels"] = tuple(data["levels"])
        return Interferer(**data)


DETECTORS = ("rms", "average", "peak", "sample")


class SurveySchema(StrictSchema):
    id = Text(required=True, validate=IDENTIFIER)
    label = Text(load_default="", validate=validate.Length(max=limits.MAX_TEXT_CHARS))
    applies_to = List(Text(validate=IDENTIFIER), load_default=None, min_length=1, max_length=limits.MAX_SYSTEMS,
                             metadata={"description": "Systems whose receivers the trace stands for "
                                                      "(give this or position)"})
    position = fields.Nested(PositionSchema, load_default=None, metadata={
        "description": "Where the trace was taken, when not at named receivers: it stands for every system "
                       "with a position on the same floor within radius_m"})
    radius_m = Number(limits.SURVEY_RADIUS_M, load_default=10.0, metadata={
        "description": "With position: how far from it the trace still stands for a system's receivers"})
    frequencies_hz = List(Number(limits.FREQUENCY_HZ), required=True, min_length=2,
                          max_length=limits.MAX_SURVEY_POINTS,
                                 metadata={"description": "Strictly increasing"})
    levels_dbm = List(Number(limits.SURVEY_LEVEL_DBM), required=True, min_length=2,
                      max_length=limits.MAX_SURVEY_POINTS,
                             metadata={"description": "Power read in the resolution bandwidth at each point"})
    resolution_bandwidth_hz = Number(limits.RESOLUTION_BANDWIDTH_HZ, required=True)
    detector = Text(load_default="rms", validate=validate.OneOf(DETECTORS))
    occupancy_fraction = List(Number(limits.FRACTION), load_default=None, max_length=limits.MAX_SURVEY_POINTS,
                                     metadata={"description": "Share of sweeps above threshold, per point"})
    detection_margin_db = Number(limits.DETECTION_MARGIN_DB, load_default=6.0, metadata={
        "description": "A channel counts as occupied this far above the trace's own floor (its median)"})
    noise_bandwidth_factor = Number(limits.NOISE_BANDWIDTH_FACTOR, load_default=1.0, metadata={
        "description": "Equivalent noise bandwidth of the resolution filter, as a multiple of it"})

    @validates_schema
    def _trace(self, data, **kwargs):
        errors = ErrorTree()
        if msg := _exactly_one(data, ("applies_to", "position")):
            errors.add(("applies_to",), msg)
        f = data["frequencies_hz"]
        for i in range(1, len(f)):
            if f[i] <= f[i - 1]:
                errors.add(("frequencies_hz", i), "Frequencies must strictly increase (sorted, no duplicates).")
                break
        if len(data["levels_dbm"]) != len(f):
            errors.add(("levels_dbm",), f"Needs one level per frequency ({len(f)}).")
        occ = data.get("occupancy_fraction")
        if occ is not None and len(occ) != len(f):
            errors.add(("occupancy_fraction",), f"Needs one share per frequency ({len(f)}).")
        errors.raise_if_any()

    @post_load
    def _make(self, data, **kwargs):
        data["applies_to"] = tuple(data["applies_to"] or ())
        for key in ("frequencies_hz", "levels_dbm"):
            data[key] = tuple(data[key])
        if data.get("occupancy_fraction") is not None:
            data["occupancy_fraction"] = tuple(data["occupancy_fraction"])
        return Survey(**data)


class SiteSchema(StrictSchema):
    name = Text(load_default="", validate=validate.Length(max=limits.MAX_TEXT_CHARS))
    profile = Text(required=True, validate=validate.OneOf(sorted(PROFILES)))
    band = fields.Nested(BandSchema, load_default=None,
                         metadata={"description": "Band edges; required for the custom profile, else an optional "
                                                  "narrowing of the profile's band."})
    grid = fields.Nested(GridSchema, required=True)
    systems = List(fields.Nested(SystemSchema), required=True, min_length=1, max_length=limits.MAX_SYSTEMS)
    coupling = fields.Nested(CouplingSchema, load_default=None)
    interferers = List(fields.Nested(InterfererSchema), load_default=list, max_length=limits.MAX_INTERFERERS)
    surveys = List(fields.Nested(SurveySchema), load_default=list, max_length=limits.MAX_SURVEYS,
                          metadata={"description": "Measured spectrum traces; each becomes fixed interferers"})
    rms_delay_spread_s = Number(limits.DELAY_SPREAD_S, load_default=None, metadata={
        "description": "RMS multipath delay spread (default 100 ns, the median Rappaport measured in factories); "
                       "sets the consecutive-hop spacing and fading correlation."})

    @validates_schema
    def _cross_checks(self, data, **kwargs):
        errors = ErrorTree()
        systems, interferers = data["systems"], data["interferers"]
        ids = _check_ids(errors, systems, interferers)
        band = _check_band(errors, data["profile"], data.get("band"))
        if band is not None:
            _check_grid(errors, data["grid"], band)
        _check_hop_sets(errors, systems, data["grid"])
        _check_groups(errors, systems)
        _check_coupling(errors, data.get("coupling") or Coupling(), ids)
        _check_link_distances(errors, systems, data.get("coupling") or Coupling())
        _check_interferer_levels(errors, interferers, ids)
        _check_surveys(errors, data["surveys"], ids, tuple(systems))
        bounds.check_overlaps(errors.add, systems, interferers)
        bounds.check_survey_totals(errors.add, data["surveys"], tuple(systems), data["grid"].count)
        errors.raise_if_any()

    @post_load
    def _make(self, data, **kwargs):
        data["systems"] = tuple(data["systems"])
        data["interferers"] = tuple(data["interferers"])
        data["surveys"] = tuple(data["surveys"])
        data["coupling"] = data["coupling"] or Coupling()
        return Site(**data)


def _check_ids(errors: ErrorTree, systems, interferers) -> set[str]:
    seen: set[str] = set()
    for i, s in enumerate(systems):
        if s.id in seen:
            errors.add(("systems", i, "id"), f"Duplicate id {s.id!r}.")
        seen.add(s.id)
    system_ids = set(seen)
    for k, itf in enumerate(interferers):
        if itf.id in seen:
            errors.add(("interferers", k, "id"), f"Duplicate id {itf.id!r} (ids are shared with systems).")
        seen.add(itf.id)
    return system_ids


def _check_band(errors: ErrorTree, profile_id: str, band: Band | None) -> Band | None:
    profile = PROFILES.get(profile_id)
    if profile is None:
        return None
    if profile.band is None:
        if band is None:
            errors.add(("band",), f"Profile {profile_id!r} needs band edges.")
        return band
    if band is None:
        return profile.band
    if band.low_hz < profile.band.low_hz or band.high_hz > profile.band.high_hz:
        errors.add(("band",), f"Must lie inside the profile's band {profile.band.low_hz:g}-{profile.band.high_hz:g} Hz.")
        return None
    return band


def _check_grid(errors: ErrorTree, grid: Grid, band: Band) -> None:
    if grid.first_centre_hz < band.low_hz:
        errors.add(("grid", "first_centre_hz"), f"Channel 0 at {grid.first_centre_hz:g} Hz lies below the band "
                                                f"({band.low_hz:g} Hz).")
    if grid.last_centre_hz > band.high_hz:
        errors.add(("grid", "count"), f"Channel {grid.count - 1} at {grid.last_centre_hz:g} Hz lies above the band "
                                      f"({band.high_hz:g} Hz).")


def _check_hop_sets(errors: ErrorTree, systems, grid: Grid) -> None:
    for i, s in enumerate(systems):
        for name in ("hop_set", "sequence"):
            for j, c in enumerate(getattr(s, name) or ()):
                if c >= grid.count:
                    errors.add(("systems", i, name, j), f"Channel {c} is off the grid (0-{grid.count - 1}).")


def _check_groups(errors: ErrorTree, systems) -> None:
    dwell: dict[str, float] = {}
    for i, s in enumerate(systems):
        g = s.time_base_group
        if g is None:
            continue
        if g in dwell and abs(dwell[g] - s.dwell_s) > 1e-12 * max(1.0, dwell[g]):
            errors.add(("systems", i, "dwell_s"), f"Systems of time-base group {g!r} must share one dwell_s.")
        dwell.setdefault(g, s.dwell_s)


def _check_coupling(errors: ErrorTree, coupling: Coupling, ids: set[str]) -> None:
    seen = set()
    for j, e in enumerate(coupling.entries):
        for name in ("from_system", "to_system"):
            if getattr(e, name) not in ids:
                errors.add(("coupling", "entries", j, name), f"Unknown system {getattr(e, name)!r}.")
        if (e.from_system, e.to_system) in seen:
            errors.add(("coupling", "entries", j), f"Duplicate entry {e.from_system}->{e.to_system}.")
        seen.add((e.from_system, e.to_system))


def _check_surveys(errors: ErrorTree, surveys, ids: set[str], systems: tuple) -> None:
    seen = set()
    for k, sv in enumerate(surveys):
        if sv.id in seen:
            errors.add(("surveys", k, "id"), f"Duplicate survey id {sv.id!r}.")
        seen.add(sv.id)
        for j, sid in enumerate(sv.applies_to):
            if sid not in ids:
                errors.add(("surveys", k, "applies_to", j), f"Unknown system {sid!r}.")
        if sv.position is not None and not surveys_domain.stands_for(sv, systems):
            errors.add(("surveys", k, "position"), _nobody_near(sv, systems))


def _nobody_near(survey, systems) -> str:
    found = [(d, s.id) for s in systems if (d := surveys_domain.distance_m(survey, s)) is not None]
    where = f"within {survey.radius_m:g} m on floor {survey.position.floor}"
    if not found:
        return f"No system with a position on floor {survey.position.floor}: the survey stands for nobody."
    d, sid = min(found)
    return f"No system's receivers lie {where}; the nearest is {sid!r} at {d:.1f} m (raise radius_m or use applies_to)."


def _check_link_distances(errors: ErrorTree, systems, coupling: Coupling) -> None:
    if coupling.propagation is not None:
        return
    for i, s in enumerate(systems):
        if s.link_distance_m is not None:
            errors.add(("systems", i, "link_distance_m"),
                       "A link distance needs coupling.propagation to compute the wanted signal.")


def _check_interferer_levels(errors: ErrorTree, interferers, ids: set[str]) -> None:
    for k, itf in enumerate(interferers):
        seen = set()
        for j, lv in enumerate(itf.levels):
            if lv.system not in ids:
                errors.add(("interferers", k, "levels", j, "system"), f"Unknown system {lv.system!r}.")
            if lv.system in seen:
                errors.add(("interferers", k, "levels", j, "system"), f"Duplicate level for {lv.system!r}.")
            seen.add(lv.system)
