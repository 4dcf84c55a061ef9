"""Assessment request and response schemas."""

from __future__ import annotations

from marshmallow import fields, post_load, validate

from cohop import limits
from cohop.api.schemas.dump import Bulk, DictOrAbsent, FiniteOrNull, Length, Part
from cohop.api.schemas.fields import Count, Text, default
from cohop.api.schemas.mobility import MobilitySchema
from cohop.api.schemas.sequences import SequencesSchema
from cohop.api.schemas.site import SiteSchema, StrictSchema
from cohop.api.schemas.traffic import TrafficFiguresSchema
from cohop.assess import DETAIL_LEVELS
from cohop.jobs.requests import AssessmentRequest, SimulationRequest, assessment_request_from


class SimulationRequestSchema(StrictSchema):
    trials_per_system = Count(limits.TRIALS_PER_SYSTEM, required=True,
                              metadata={"description": "Simulated packet attempts per system; the total is capped "
                                                       "by the server (see the 422 it answers above the cap)."})
    seed = Count(limits.SIMULATION_SEED, load_default=default(SimulationRequest, "seed"))


class AssessmentRequestSchema(StrictSchema):
    site = fields.Nested(SiteSchema, required=True)
    simulation = fields.Nested(SimulationRequestSchema, load_default=None,
                               metadata={"description": "Optional Monte Carlo check beside the analytic figures."})
    detail = Text(load_default=default(AssessmentRequest, "detail"), validate=validate.OneOf(DETAIL_LEVELS),
                  metadata={"description": "system: per system only; channel: plus per-channel totals; "
                                           "source: plus each channel's breakdown by source."})

    @post_load
    def _make(self, data, **kwargs) -> AssessmentRequest:
        return assessment_request_from(data, data["site"])


# --- response: dumps cohop.jobs.answers.AssessmentAnswer ---------------------

def _p(description: str = "", **kwargs) -> fields.Float:
    return fields.Float(metadata={"description": description} if description else {}, **kwargs)


class FindingSchema(StrictSchema):  # cohop.regulatory.rules.Finding
    rule = fields.String(attribute="rule.id")
    title = fields.String(attribute="rule.title")
    citation = fields.String(attribute="rule.citation")
    certainty = fields.String(attribute="rule.certainty", metadata={
        "description": "published, seen quoted, partly seen, from memory, or common practice"})
    status = fields.String(metadata={"description": "pass, fail or warning"})
    message = fields.String()
    measured = fields.Float(allow_none=True)
    limit = fields.Float(allow_none=True)
    unit = fields.String()


class ComplianceSchema(StrictSchema):  # cohop.jobs.answers.Compliance
    profile = fields.String()
    status = fields.String(metadata={"description": "fail if any finding fails, else warning if any warns, else pass"})
    findings = fields.List(fields.Nested(FindingSchema))


class OverlapSchema(Bulk, StrictSchema):  # cohop.prepare.SourceLink
    aligned = fields.Boolean()
    base_count = fields.Integer(attribute="overlap.k0", metadata={"description": "k0: bursts overlapped at least"})
    extra_probability = _p("r: probability of one burst more", attribute="overlap.r")
    mean_count = _p(attribute="overlap.mean")


class SourceSchema(Bulk, StrictSchema):  # cohop.assess.SourceFigures
    id = fields.String(attribute="source_id")
    kind = fields.String(metadata={"description": "system or interferer"})
    level_dbm = _p("Interfering level at the victim's receiver input, in its channel", attribute="link.level_dbm")
    excess_db = _p("level - (wanted - required SIR); harmful co-channel when > 0", attribute="link.excess_db")
    harm_bound_hz = FiniteOrNull(allow_none=True, attribute="link.bound_hz", metadata={
        "description": "Offsets below this are harmful; 0: none; null: every offset"})
    window_channels = fields.Integer(allow_none=True, metadata={
        "description": "Systems: over the capture threshold on median levels iff |c - c'| <= window (-1: never)"})
    harm_reach_channels = fields.Integer(allow_none=True, attribute="harm_reach", metadata={
        "description": "Systems: largest channel offset where one transmission can destroy a hop (-1: none; the "
                       "grid's channel count: every offset)"})
    harm_by_offset = fields.List(fields.Float(), allow_none=True, metadata={
        "description": "Systems: probability that one overlapped transmission at channel offset d (the index) "
                       "destroys a hop; the last value holds at every larger offset. Fading-aware (the answer's "
                       "assumptions say how); values below 0.001 are 0"})
    harm_by_distance = fields.List(fields.List(fields.Float()), allow_none=True, metadata={
        "description": "Interferers: [distance from the span's nearest edge in Hz, probability that it destroys "
                       "a hop on a channel whose centre lies that far or further]; inside the span the distance is 0"})
    span_hz = fields.List(fields.Float(), allow_none=True, metadata={"description": "Interferers: [low, high]"})
    channel_range = fields.List(fields.Integer(), allow_none=True, metadata={
        "description": "Interferers: grid channels lo <= c < hi where it has harm"})
    activity_fraction = _p(attribute="link.activity_fraction")
    overlap = Part(OverlapSchema, of="link", null_when="overlap", allow_none=True, metadata={
        "description": "Burst overlap count; null for a continuous interferer"})
    collision_probability = _p("Standalone per-hop probability, mean over the hop set")


class ChannelSchema(Bulk, StrictSchema):  # cohop.assess.ChannelFigures
    channel = fields.Integer()
    centre_hz = _p()
    collision_probability = _p()
    hop_loss_probability = _p("1 - (1 - collision)(1 - fade)")
    dominant_source = fields.String(allow_none=True)
    by_source = DictOrAbsent(keys=fields.String(), values=fields.Float(), metadata={
        "description": "detail=source only: nonzero standalone probabilities"})


class CaptureSchema(StrictSchema):  # cohop.assess.CaptureFigures
    wanted_fading = fields.String(metadata={"description": "rayleigh, rician or none (the site's fading.model)"})
    k_factor_db = fields.Float(allow_none=True)
    interference_fading = fields.String(allow_none=True, metadata={
        "description": "steady or rayleigh (the site's fading.interference); null at fading none"})
    combination = fields.String(metadata={
        "description": "product: a hop survives its sources with the product of one factor per overlapped "
                       "transmission (exact for a Rayleigh-faded wanted signal; the threshold at fading none); "
                       "joint: a Rician-faded wanted signal, the transmissions' powers added before they meet it, "
                       "so a channel's collision is at least 1 - prod(1 - by_source)"})


class LinkSchema(StrictSchema):  # cohop.assess.SystemFigures
    wanted_signal_dbm = _p(attribute="wanted_dbm")
    fade_margin_db = _p()
    noise_floor_dbm = fields.Float(allow_none=True)
    capture = fields.Nested(CaptureSchema)


class PerHopSchema(StrictSchema):  # cohop.assess.SystemFigures
    collision_probability = _p("Mean over the hop set of the channels' collision (1 - prod(1 - source "
                               "probabilities), or joint: link.capture.combination)")
    fade_probability = _p()


class PerAttemptSchema(StrictSchema):  # cohop.jobs.answers.SystemResult
    hops = fields.Integer(attribute="system.hops_per_attempt")
    collision_probability = _p("1 - (1 - per-hop collision)^hops", attribute="figures.attempt_collision_probability")
    fade_probability = _p("1 - (1 - per-hop fade)^hops", attribute="figures.attempt_fade_probability")
    loss_probability = _p("1 - (1 - collision)(1 - fade)", attribute="figures.attempt_loss_probability")


class RetriesSchema(StrictSchema):  # cohop.jobs.answers.SystemResult
    retry_limit = fields.Integer(attribute="system.retry_limit")
    residual_loss_probability = _p("loss^(retry_limit + 1)", attribute="figures.residual_loss_probability")
    expected_attempts = _p("sum_{j=0..retry_limit} loss^j", attribute="figures.expected_attempts")


class SystemResultSchema(StrictSchema):  # cohop.jobs.answers.SystemResult
    id = fields.String(attribute="figures.id")
    label = fields.String(attribute="system.label")
    priority_weight = _p(attribute="system.priority_weight")
    hop_set = fields.List(fields.Integer(), attribute="figures.hop_set")
    hop_set_origin = fields.String(attribute="figures.hop_set_origin",
                                   metadata={"description": "request, or whole band when none was given"})
    channel_count = Length(of="figures.hop_set")
    link = Part(LinkSchema, of="figures")
    per_hop = Part(PerHopSchema, of="figures")
    per_attempt = Part(PerAttemptSchema)
    retries = Part(RetriesSchema)
    sources = fields.List(fields.Nested(SourceSchema), attribute="figures.sources")
    channels = fields.List(fields.Nested(ChannelSchema), attribute="figures.channels")
    compliance = fields.Nested(ComplianceSchema)
    mobility = fields.Nested(MobilitySchema, allow_none=True, metadata={
        "description": "Sites with a system that moves: the figures across its positions and where it is worst "
                       "off (null otherwise)"})


class SummarySchema(StrictSchema):  # cohop.assess.Assessment
    weighted_collision_probability = _p("sum of priority_weight x per-hop collision", attribute="weighted_collision")
    worst_collision_probability = _p(attribute="worst_collision")
    worst_system = fields.String()


class SimulatedRateSchema(StrictSchema):  # cohop.jobs.answers.SimulatedFigure
    id = fields.String()
    probability = _p(attribute="rate.probability")
    interval = fields.List(fields.Float(), metadata={"description": "95 % Wilson score interval"})
    hits = fields.Integer(attribute="rate.hits")
    trials = fields.Integer(attribute="rate.trials")
    analytic_probability = _p()
    within_interval = fields.Boolean()


class SimulatedSystemSchema(SimulatedRateSchema):
    by_source = fields.List(fields.Nested(SimulatedRateSchema))


class SimulationResultSchema(StrictSchema):  # cohop.jobs.answers.SimulationCheck
    seed = fields.Integer()
    trials_per_system = fields.Integer()
    confidence = _p()
    systems = fields.List(fields.Nested(SimulatedSystemSchema))


class BandOutSchema(StrictSchema):  # cohop.site.Band
    low_hz = _p()
    high_hz = _p()


class ProfileRefSchema(StrictSchema):  # cohop.regulatory.profiles.Profile
    id = fields.String()
    name = fields.String()


class DerivedInterfererSchema(StrictSchema):  # cohop.surveys.DerivedInterferer
    id = fields.String(attribute="interferer.id")
    survey = fields.String()
    system = fields.String(metadata={"description": "The system whose receivers the survey stands for"})
    low_hz = fields.Float(attribute="interferer.low_hz")
    high_hz = fields.Float(attribute="interferer.high_hz")
    channels = fields.List(fields.Integer(), metadata={"description": "Inclusive grid channel range"})
    channel_level_dbm = fields.Float(metadata={"description": "Mean power in the system's channel bandwidth"})
    floor_dbm = fields.Float(metadata={"description": "The survey's own floor (median channel power)"})
    activity_fraction = fields.Float(attribute="interferer.activity_fraction")


class AssessmentResponseSchema(StrictSchema):  # cohop.jobs.answers.AssessmentAnswer
    cautions = fields.List(fields.String())
    profile = fields.Nested(ProfileRefSchema, attribute="assessment.prepared.profile")
    band = fields.Nested(BandOutSchema, attribute="assessment.prepared.band")
    assumptions = fields.List(fields.String())
    notes = fields.List(fields.String(), attribute="assessment.notes")
    summary = fields.Nested(SummarySchema, attribute="assessment")
    systems = fields.List(fields.Nested(SystemResultSchema))
    simulation = fields.Nested(SimulationResultSchema, allow_none=True)
    derived_interferers = fields.List(fields.Nested(DerivedInterfererSchema), attribute="assessment.prepared.derived",
                                      metadata={"description": "What the site's surveys became: fixed interferers "
                                                               "used by evaluation and planning"})
    sequences = fields.Nested(SequencesSchema, allow_none=True, metadata={
        "description": "When the request gives hop sequences: what they do, and retries driven by them"})
    traffic = fields.List(fields.Nested(TrafficFiguresSchema), metadata={
        "description": "Per system that gives traffic: latency, deadline, runs of losses and watchdog stops "
                       "along its hop order. Planning estimates: the machine's safety assessment governs."})
