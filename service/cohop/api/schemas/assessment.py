"""Assessment request and response schemas."""

from __future__ import annotations

from marshmallow import fields, post_load, validate

from cohop import limits
from cohop.api.schemas.fields import Count, Text
from cohop.api.schemas.sequences import SequencesSchema
from cohop.api.schemas.site import SiteSchema, StrictSchema
from cohop.assess import DETAIL_LEVELS
from cohop.evaluation import AssessmentRequest, SimulationRequest


class SimulationRequestSchema(StrictSchema):
    trials_per_system = Count(limits.TRIALS_PER_SYSTEM, required=True,
                              metadata={"description": "Simulated packet attempts per system; the total is capped "
                                                       "by the server (see the 422 it answers above the cap)."})
    seed = Count(limits.SIMULATION_SEED, load_default=0)

    @post_load
    def _make(self, data, **kwargs):
        return SimulationRequest(**data)


class AssessmentRequestSchema(StrictSchema):
    site = fields.Nested(SiteSchema, required=True)
    simulation = fields.Nested(SimulationRequestSchema, load_default=None,
                               metadata={"description": "Optional Monte Carlo check beside the analytic figures."})
    detail = Text(load_default="channel", validate=validate.OneOf(DETAIL_LEVELS),
                  metadata={"description": "system: per system only; channel: plus per-channel totals; "
                                           "source: plus each channel's breakdown by source."})

    @post_load
    def _make(self, data, **kwargs):
        return AssessmentRequest(**data)


# --- response ---------------------------------------------------------------

def _p(description: str = "") -> fields.Float:
    return fields.Float(metadata={"description": description} if description else {})


class FindingSchema(StrictSchema):
    rule = fields.String()
    title = fields.String()
    citation = fields.String()
    certainty = fields.String(metadata={"description": "published, seen quoted, partly seen, from memory, "
                                                       "or common practice"})
    status = fields.String(metadata={"description": "pass, fail or warning"})
    message = fields.String()
    measured = fields.Float(allow_none=True)
    limit = fields.Float(allow_none=True)
    unit = fields.String()


class ComplianceSchema(StrictSchema):
    profile = fields.String()
    status = fields.String(metadata={"description": "fail if any finding fails, else warning if any warns, else pass"})
    findings = fields.List(fields.Nested(FindingSchema))


class OverlapSchema(StrictSchema):
    aligned = fields.Boolean()
    base_count = fields.Integer(metadata={"description": "k0: bursts overlapped at least"})
    extra_probability = _p("r: probability of one burst more")
    mean_count = _p()


class SourceSchema(StrictSchema):
    id = fields.String()
    kind = fields.String(metadata={"description": "system or interferer"})
    level_dbm = _p("Interfering level at the victim's receiver input, in its channel")
    excess_db = _p("level - (wanted - required SIR); harmful co-channel when > 0")
    harm_bound_hz = fields.Float(allow_none=True, metadata={
        "description": "Offsets below this are harmful; 0: none; null: every offset"})
    window_channels = fields.Integer(allow_none=True, metadata={
        "description": "Systems: harmful iff |c - c'| <= window (-1: never)"})
    channel_range = fields.List(fields.Integer(), allow_none=True, metadata={
        "description": "Interferers: harmful grid channels lo <= c < hi"})
    activity_fraction = _p()
    overlap = fields.Nested(OverlapSchema, allow_none=True, metadata={
        "description": "Burst overlap count; null for a continuous interferer"})
    collision_probability = _p("Standalone per-hop probability, mean over the hop set")


class ChannelSchema(StrictSchema):
    channel = fields.Integer()
    centre_hz = _p()
    collision_probability = _p()
    hop_loss_probability = _p("1 - (1 - collision)(1 - fade)")
    dominant_source = fields.String(allow_none=True)
    by_source = fields.Dict(keys=fields.String(), values=fields.Float(), metadata={
        "description": "detail=source only: nonzero standalone probabilities"})


class LinkSchema(StrictSchema):
    wanted_signal_dbm = _p()
    fade_margin_db = _p()
    noise_floor_dbm = fields.Float(allow_none=True)


class PerHopSchema(StrictSchema):
    collision_probability = _p("Mean over the hop set of 1 - prod(1 - source probabilities)")
    fade_probability = _p()


class PerAttemptSchema(StrictSchema):
    hops = fields.Integer()
    collision_probability = _p("1 - (1 - per-hop collision)^hops")
    fade_probability = _p("1 - (1 - per-hop fade)^hops")
    loss_probability = _p("1 - (1 - collision)(1 - fade)")


class RetriesSchema(StrictSchema):
    retry_limit = fields.Integer()
    residual_loss_probability = _p("loss^(retry_limit + 1)")
    expected_attempts = _p("sum_{j=0..retry_limit} loss^j")


class SystemResultSchema(StrictSchema):
    id = fields.String()
    label = fields.String()
    priority_weight = _p()
    hop_set = fields.List(fields.Integer())
    hop_set_origin = fields.String(metadata={"description": "request, or whole band when none was given"})
    channel_count = fields.Integer()
    link = fields.Nested(LinkSchema)
    per_hop = fields.Nested(PerHopSchema)
    per_attempt = fields.Nested(PerAttemptSchema)
    retries = fields.Nested(RetriesSchema)
    sources = fields.List(fields.Nested(SourceSchema))
    channels = fields.List(fields.Nested(ChannelSchema))
    compliance = fields.Nested(ComplianceSchema)


class SummarySchema(StrictSchema):
    weighted_collision_probability = _p("sum of priority_weight x per-hop collision")
    worst_collision_probability = _p()
    worst_system = fields.String()


class SimulatedRateSchema(StrictSchema):
    id = fields.String()
    probability = _p()
    interval = fields.List(fields.Float(), metadata={"description": "95 % Wilson score interval"})
    hits = fields.Integer()
    trials = fields.Integer()
    analytic_probability = _p()
    within_interval = fields.Boolean()


class SimulatedSystemSchema(SimulatedRateSchema):
    by_source = fields.List(fields.Nested(SimulatedRateSchema))


class SimulationResultSchema(StrictSchema):
    seed = fields.Integer()
    trials_per_system = fields.Integer()
    confidence = _p()
    systems = fields.List(fields.Nested(SimulatedSystemSchema))


class BandOutSchema(StrictSchema):
    low_hz = _p()
    high_hz = _p()


class ProfileRefSchema(StrictSchema):
    id = fields.String()
    name = fields.String()


class DerivedInterfererSchema(StrictSchema):
    id = fields.String()
    survey = fields.String()
    system = fields.String(metadata={"description": "The system whose receivers the survey stands for"})
    low_hz = fields.Float()
    high_hz = fields.Float()
    channels = fields.List(fields.Integer(), metadata={"description": "Inclusive grid channel range"})
    channel_level_dbm = fields.Float(metadata={"description": "Mean power in the system's channel bandwidth"})
    floor_dbm = fields.Float(metadata={"description": "The survey's own floor (median channel power)"})
    activity_fraction = fields.Float()


class AssessmentResponseSchema(StrictSchema):
    cautions = fields.List(fields.String())
    profile = fields.Nested(ProfileRefSchema)
    band = fields.Nested(BandOutSchema)
    assumptions = fields.List(fields.String())
    notes = fields.List(fields.String())
    summary = fields.Nested(SummarySchema)
    systems = fields.List(fields.Nested(SystemResultSchema))
    simulation = fields.Nested(SimulationResultSchema, allow_none=True)
    derived_interferers = fields.List(fields.Nested(DerivedInterfererSchema), metadata={
        "description": "What the site's surveys became: fixed interferers used by evaluation and planning"})
    sequences = fields.Nested(SequencesSchema, allow_none=True, metadata={
        "description": "When the request gives hop sequences: what they do, and retries driven by them"})
