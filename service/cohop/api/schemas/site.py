"""Request schemas for a site description: field types and ranges here, every rule across fields in
`cohop.site_rules`.

Each object's schema checks its fields, then that object's rules
(`site_rules.system_problems`, ...); `SiteSchema` builds the `cohop.site.Site`
(`cohop.site_form`) and checks the site's rules on it. Defaults are those of the
site dataclasses.
"""

from __future__ import annotations

import marshmallow as ma
from marshmallow import fields, post_load, pre_load, validate, validates_schema

from cohop import limits, site_rules
from cohop.physics import capture
from cohop.api.schemas.fields import IDENTIFIER, Count, Flag, List, Number, Text, default
from cohop.regulatory import PROFILES
from cohop.regulatory.profiles import unknown_profile_message
from cohop.site import MOBILITY_POLICIES, Area, Grid, Interferer, Position, Propagation, Site, Survey, System
from cohop.site_form import site_from

FADING_MODELS = capture.WANTED_MODELS
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


def raise_problems(problems) -> None:
    """Rule problems (`cohop.site_rules.Problem`: path, message) as one ValidationError at their paths."""
    errors = ErrorTree()
    for path, message in problems:
        errors.add(path, message)
    errors.raise_if_any()


class StrictSchema(ma.Schema):
    class Meta:
        unknown = ma.RAISE
        ordered = True

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.error_messages = {**self.error_messages, "type": expected_object(self)}

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


def expected_object(schema: ma.Schema) -> str:
    """The message for a value that is not an object: the shape wanted, required fields marked."""
    names = [f'"{f.data_key or n}"' + ("" if not f.required else " (required)") for n, f in schema.load_fields.items()]
    shown = ", ".join(names[:12]) + (", ..." if len(names) > 12 else "")
    return f"Expected a JSON object with {shown}."


class FadingField(fields.Nested):
    """`fading`: an object, or the model's name alone as shorthand ("rayleigh", "none"; "rician" needs its
    k_factor_db, so only the object form gives it)."""

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, str):
            value = {"model": value}
        elif not isinstance(value, dict):
            raise ma.ValidationError(f'Expected a fading model name ({", ".join(map(repr, FADING_MODELS))}) or '
                                     'an object {"model": ..., "k_factor_db": ...} (k_factor_db for rician only).')
        return super()._deserialize(value, attr, data, **kwargs)


def channel_index() -> Count:
    return Count(limits.CHANNEL_INDEX)


class BandSchema(StrictSchema):
    low_hz = Number(limits.FREQUENCY_HZ, required=True)
    high_hz = Number(limits.FREQUENCY_HZ, required=True)

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(site_rules.band_problems(data))


class GridSchema(StrictSchema):
    first_centre_hz = Number(limits.FREQUENCY_HZ, required=True,
                             metadata={"description": "Centre of channel 0."})
    spacing_hz = Number(limits.CHANNEL_SPACING_HZ, required=True)
    count = Count(required=True, validate=validate.Range(min=1, max=limits.MAX_CHANNELS))
    first_channel_number = Count(limits.CHANNEL_NUMBER, load_default=default(Grid, "first_channel_number"),
                                 metadata={"description": "Your own number of channel 0 (hop tables only)."})
    channel_number_step = Count(limits.CHANNEL_NUMBER_STEP, load_default=default(Grid, "channel_number_step"),
                                metadata={"description": "Your own number goes up by this per grid channel "
                                                         "(hop tables only)."})


class RejectionPointSchema(StrictSchema):
    offset_hz = Number(limits.REJECTION_OFFSET_HZ, required=True)
    rejection_db = Number(limits.REJECTION_DB, required=True)


class FadingSchema(StrictSchema):
    model = Text(required=True, validate=validate.OneOf(FADING_MODELS))
    k_factor_db = Number(limits.K_FACTOR_DB, metadata={"description": "Rician K-factor; rician only."})
    interference = Text(validate=validate.OneOf(capture.LINK_MODELS), load_default=capture.DEFAULT_LINK_MODEL,
                        metadata={"description": "How the interference this receiver hears fades: steady (the "
                                                 "default, conservative) or rayleigh. With a faded wanted signal "
                                                 "it sets the harm of each overlapped transmission."})

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(site_rules.fading_problems(data))


class PositionSchema(StrictSchema):
    x_m = Number(limits.COORDINATE_M, required=True)
    y_m = Number(limits.COORDINATE_M, required=True)
    floor = Count(limits.FLOOR, load_default=default(Position, "floor"))


class AreaSchema(StrictSchema):  # a moving system's rectangle, sampled on a grid
    x_min_m = Number(limits.COORDINATE_M, required=True)
    x_max_m = Number(limits.COORDINATE_M, required=True)
    y_min_m = Number(limits.COORDINATE_M, required=True)
    y_max_m = Number(limits.COORDINATE_M, required=True)
    step_m = Number(limits.AREA_STEP_M, required=True, metadata={
        "description": "Grid step along x and y; both edges are sampled too, so points are at most step_m apart."})
    floor = Count(limits.FLOOR, load_default=default(Area, "floor"))

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(site_rules.area_problems(data))
TRAFFIC_NOTE = ("Planning estimates only: the machine's safety assessment and the standards that govern cableless "
                "control of machinery decide what is acceptable; this service encodes no values from them.")


class TrafficSchema(StrictSchema):
    message_interval_s = Number(limits.MESSAGE_INTERVAL_S, required=True,
                                metadata={"description": "A message every this many seconds."})
    deadline_s = Number(limits.DEADLINE_S, load_default=None,
                        metadata={"description": "Latency a message must meet (from its arrival at the radio)."})
    deadline_probability = Number(limits.FRACTION, load_default=None,
                                  metadata={"description": "Share of messages that must meet deadline_s."})
    watchdog_s = Number(limits.WATCHDOG_S, load_default=None,
                        metadata={"description": "The machine stops when no valid message arrives for this long."})
    max_stops_per_hour = Number(limits.STOPS_PER_HOUR, load_default=None,
                                metadata={"description": "Acceptable watchdog stops per hour of operation."})

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(site_rules.traffic_problems(data))


class SystemSchema(StrictSchema):
    id = Text(required=True, validate=IDENTIFIER)
    label = Text(load_default=default(System, "label"), validate=validate.Length(max=limits.MAX_TEXT_CHARS))
    tx_power_dbm = Number(limits.TX_POWER_DBM, required=True,
                          metadata={"description": "Conducted transmit power."})
    antenna_gain_dbi = Number(limits.ANTENNA_GAIN_DBI, load_default=default(System, "antenna_gain_dbi"))
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
    fading = FadingField(FadingSchema, load_default=None, metadata={
        "description": 'An object, or the model name alone: "rayleigh" is {"model": "rayleigh"}.'})
    retry_limit = Count(limits.RETRY_LIMIT, required=True)
    hops_per_attempt = Count(limits.HOPS_PER_ATTEMPT, load_default=default(System, "hops_per_attempt"),
                             metadata={"description": "Hops one attempt needs (e.g. 2 for data and acknowledgement)."})
    priority_weight = Number(limits.PRIORITY_WEIGHT, load_default=default(System, "priority_weight"))
    position = fields.Nested(PositionSchema, load_default=None)
    positions = List(fields.Nested(PositionSchema), load_default=None, min_length=1, max_length=limits.MAX_POSITIONS,
                     metadata={"description": "A system that moves: the places it may be (instead of position); "
                                              "coupling follows the site's mobility_policy."})
    area = fields.Nested(AreaSchema, load_default=None, metadata={
        "description": "A system that moves over a rectangle, sampled every step_m (instead of position)."})
    time_base_group = Text(load_default=None, validate=IDENTIFIER,
                           metadata={"description": "Systems in one group have slot-aligned dwells."})
    hop_set = List(channel_index(), load_default=None, min_length=1, max_length=limits.MAX_CHANNELS,
                          metadata={"description": "Grid channel indices the system hops over."})
    sequence = List(channel_index(), load_default=None, min_length=1, max_length=limits.MAX_SEQUENCE_HOPS,
                           metadata={"description": "The hop order its radios use (one period of channel "
                                                    "indices); the hop set is its channels."})
    fixed_point_to_point = Flag(load_default=False, metadata={"description": (
        "Used exclusively for fixed point-to-point links: 47 CFR 15.247(c)(1) then relaxes the antenna-gain "
        "reduction (2400-2483.5 MHz: 1 dB per 3 dB above 6 dBi; 5725-5850 MHz: none); elsewhere a finding says "
        "it changes nothing.")})
    traffic = fields.Nested(TrafficSchema, load_default=None, metadata={"description": (
        "Message interval, deadline and link-loss watchdog; the assessment then reports latency, deadline and "
        "watchdog-stop figures. " + TRAFFIC_NOTE)})

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(site_rules.system_problems(data))


class PropagationSchema(StrictSchema):
    model = Text(required=True, validate=validate.OneOf(PROPAGATION_MODELS))
    exponent = Number(limits.PATH_LOSS_EXPONENT, metadata={"description": "log_distance: path-loss exponent n."})
    reference_loss_db = Number(limits.REFERENCE_LOSS_DB,
                               metadata={"description": "log_distance: loss at the reference distance "
                                                        "(default: free-space loss there)."})
    reference_distance_m = Number(limits.REFERENCE_DISTANCE_M,
                                  load_default=default(Propagation, "reference_distance_m"))
    environment = Text(validate=validate.OneOf(P1238_ENVIRONMENTS), metadata={"description": "p1238 table row."})
    power_loss_coefficient = Number(limits.POWER_LOSS_COEFFICIENT,
                                    metadata={"description": "p1238: N, overriding the table."})
    floor_loss_db = Number(limits.FLOOR_LOSS_DB,
                           metadata={"description": "Loss per floor crossed (p1238: overrides the table Lf(n))."})
    floor_height_m = Number(limits.FLOOR_HEIGHT_M, load_default=default(Propagation, "floor_height_m"))
    margin_db = Number(limits.PROPAGATION_MARGIN_DB, load_default=default(Propagation, "margin_db"),
                       metadata={"description": "Planning allowance: lowers computed coupling losses and "
                                                "raises computed link losses."})

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(site_rules.propagation_problems(data))


class CouplingEntrySchema(StrictSchema):
    from_system = Text(required=True, validate=IDENTIFIER)
    to_system = Text(required=True, validate=IDENTIFIER)
    loss_db = Number(limits.COUPLING_LOSS_DB, required=True,
                     metadata={"description": "Transmitter output to receiver input, antennas and cables "
                                              "included; holds both ways unless the reverse is also given."})

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(site_rules.coupling_entry_problems(data))


class CouplingSchema(StrictSchema):
    propagation = fields.Nested(PropagationSchema, load_default=None)
    entries = List(fields.Nested(CouplingEntrySchema), load_default=list, max_length=limits.MAX_COUPLING_ENTRIES)


class InterfererLevelSchema(StrictSchema):
    system = Text(required=True, validate=IDENTIFIER)
    level_dbm = Number(limits.SIGNAL_DBM, required=True,
                       metadata={"description": "Total power at the system's receiver input."})


class InterfererSchema(StrictSchema):
    id = Text(required=True, validate=IDENTIFIER)
    label = Text(load_default=default(Interferer, "label"), validate=validate.Length(max=limits.MAX_TEXT_CHARS))
    low_hz = Number(limits.FREQUENCY_HZ)
    high_hz = Number(limits.FREQUENCY_HZ)
    centre_hz = Number(limits.FREQUENCY_HZ)
    width_hz = Number(limits.INTERFERER_WIDTH_HZ)
    levels = List(fields.Nested(InterfererLevelSchema), load_default=list, max_length=limits.MAX_SYSTEMS)
    eirp_dbm = Number(limits.EIRP_DBM)
    position = fields.Nested(PositionSchema, load_default=None)
    activity_fraction = Number(limits.FRACTION, load_default=default(Interferer, "activity_fraction"))
    burst_s = Number(limits.BURST_S)
    period_s = Number(limits.PERIOD_S)

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(site_rules.interferer_problems(data))


DETECTORS = ("rms", "average", "peak", "sample")


class SurveySchema(StrictSchema):
    id = Text(required=True, validate=IDENTIFIER)
    label = Text(load_default=default(Survey, "label"), validate=validate.Length(max=limits.MAX_TEXT_CHARS))
    applies_to = List(Text(validate=IDENTIFIER), load_default=None, min_length=1, max_length=limits.MAX_SYSTEMS,
                             metadata={"description": "Systems whose receivers the trace stands for "
                                                      "(give this or position)"})
    position = fields.Nested(PositionSchema, load_default=None, metadata={
        "description": "Where the trace was taken, when not at named receivers: it stands for every system "
                       "with a position on the same floor within radius_m"})
    radius_m = Number(limits.SURVEY_RADIUS_M, load_default=default(Survey, "radius_m"), metadata={
        "description": "With position: how far from it the trace still stands for a system's receivers"})
    frequencies_hz = List(Number(limits.FREQUENCY_HZ), required=True, min_length=2,
                          max_length=limits.MAX_SURVEY_POINTS,
                                 metadata={"description": "Strictly increasing"})
    levels_dbm = List(Number(limits.SURVEY_LEVEL_DBM), required=True, min_length=2,
                      max_length=limits.MAX_SURVEY_POINTS,
                             metadata={"description": "Power read in the resolution bandwidth at each point"})
    resolution_bandwidth_hz = Number(limits.RESOLUTION_BANDWIDTH_HZ, required=True)
    detector = Text(load_default=default(Survey, "detector"), validate=validate.OneOf(DETECTORS))
    occupancy_fraction = List(Number(limits.FRACTION), load_default=None, max_length=limits.MAX_SURVEY_POINTS,
                                     metadata={"description": "Share of sweeps above threshold, per point"})
    detection_margin_db = Number(limits.DETECTION_MARGIN_DB, load_default=default(Survey, "detection_margin_db"),
                                 metadata={"description": "A channel counts as occupied this far above the "
                                                          "trace's own floor (its median)"})
    noise_bandwidth_factor = Number(limits.NOISE_BANDWIDTH_FACTOR,
                                    load_default=default(Survey, "noise_bandwidth_factor"),
                                    metadata={"description": "Equivalent noise bandwidth of the resolution filter, "
                                                             "as a multiple of it"})

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(site_rules.survey_problems(data))


def _known_profile(value: str) -> None:
    if value not in PROFILES:
        raise ma.ValidationError(unknown_profile_message(value))


class SiteSchema(StrictSchema):
    name = Text(load_default=default(Site, "name"), validate=validate.Length(max=limits.MAX_TEXT_CHARS))
    profile = Text(required=True, validate=[validate.Length(max=limits.MAX_TEXT_CHARS), _known_profile],
                   metadata={"enum": sorted(PROFILES)})
    band = fields.Nested(BandSchema, load_default=None,
                         metadata={"description": "Band edges; required for the custom profile, else an optional "
                                                  "narrowing of the profile's band."})
    grid = fields.Nested(GridSchema, required=True)
    systems = List(fields.Nested(SystemSchema), required=True, min_length=1, max_length=limits.MAX_SYSTEMS)
    coupling = fields.Nested(CouplingSchema, load_default=None)
    interferers = List(fields.Nested(InterfererSchema), load_default=list, max_length=limits.MAX_INTERFERERS)
    surveys = List(fields.Nested(SurveySchema), load_default=list, max_length=limits.MAX_SURVEYS,
                          metadata={"description": "Measured spectrum traces; each becomes fixed interferers"})
    mobility_policy = Text(load_default=default(Site, "mobility_policy"), validate=validate.OneOf(MOBILITY_POLICIES),
                           metadata={"description": "Systems that move: worst (each pair coupled at its worst "
                                                    "position pair; for safety-related links) or mean (figures "
                                                    "averaged over each moving system's positions, the worst "
                                                    "beside). Planning always uses the worst."})
    rms_delay_spread_s = Number(limits.DELAY_SPREAD_S, load_default=None, metadata={
        "description": "RMS multipath delay spread (default 100 ns, the median Rappaport measured in factories); "
                       "sets the consecutive-hop spacing and fading correlation."})

    @post_load
    def _make(self, data, **kwargs) -> Site:
        site = site_from(data)
        raise_problems(site_rules.site_problems(site))
        return site

