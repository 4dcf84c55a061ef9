"""Response schemas of hopping sequences and their sequence-driven figures."""

from __future__ import annotations

from marshmallow import fields

from cohop.api.schemas.site import StrictSchema


class FamilyRefSchema(StrictSchema):
    component = fields.Integer()
    prime = fields.Integer()
    member = fields.Integer(metadata={"description": "a of s_a(t) = a t mod p"})


class UsesSchema(StrictSchema):
    min = fields.Integer()
    max = fields.Integer()


class SpacingSchema(StrictSchema):
    min_channels = fields.Integer(metadata={"description": "Closest consecutive hops (cyclic), grid steps"})
    min_hz = fields.Float()
    required_channels = fields.Integer(metadata={"description": "Coherence bandwidth in grid steps"})
    required_hz = fields.Float(metadata={"description": "Coherence bandwidth 1/(2 pi sigma_tau)"})
    fading_correlation_max = fields.Float(metadata={"description": "Envelope correlation at the closest step"})
    fading_correlation_mean = fields.Float()


class OrderSchema(StrictSchema):
    reversal_share = fields.Float()
    distinct_steps = fields.Integer()
    looks_random = fields.Boolean(metadata={"description": "Our screening of 'random in direction and magnitude'"})


class RetrySchema(StrictSchema):
    packets = fields.Integer()
    attempt_loss_probability = fields.Float()
    residual_loss_probability = fields.Float(metadata={"description": "Simulated: every attempt lost"})
    residual_interval = fields.List(fields.Float(), metadata={"description": "95 % Wilson interval"})
    independent_residual_probability = fields.Float(metadata={"description": "attempt loss^(retry_limit + 1)"})


class SystemRetrySchema(RetrySchema):
    analytic_residual_probability = fields.Float(metadata={"description": "From the independent-attempt model"})
    ascending_order = fields.Nested(RetrySchema, metadata={
        "description": "The same hop set in ascending order: what a poor order costs"})
    common_pattern = fields.Nested(RetrySchema, metadata={
        "description": "Every system visiting its own channels in one common rank pattern (that of the first "
                       "system with as many channels), so interleaved neighbours move in step: what a "
                       "correlated neighbour costs"})


class SequenceSchema(StrictSchema):
    id = fields.String()
    construction = fields.String()
    group = fields.String(allow_none=True)
    family = fields.Nested(FamilyRefSchema, allow_none=True)
    channels = fields.List(fields.Integer(), metadata={"description": "Hop order, one period"})
    centres_hz = fields.List(fields.Float())
    period_hops = fields.Integer()
    dwell_s = fields.Float()
    period_s = fields.Float()
    uses = fields.Nested(UsesSchema)
    spacing = fields.Nested(SpacingSchema)
    order = fields.Nested(OrderSchema)
    retries = fields.Nested(SystemRetrySchema)


class SequencePairSchema(StrictSchema):
    victim = fields.String()
    source = fields.String()
    shared_channels = fields.Integer()
    coincidences_max = fields.Integer(allow_none=True, metadata={
        "description": "Most coincidences per common period at any hop offset (equal dwell only)"})
    common_period_hops = fields.Integer(allow_none=True)
    longest_run_hops = fields.Integer(metadata={"description": "Longest run of the victim's hops the source can hit"})
    aligned = fields.Boolean()
    aligned_hit_rate = fields.Float(allow_none=True, metadata={"description": "Exact, in the plan's alignment"})
    unaligned_hit_rate = fields.Float(metadata={"description": "The same sequences with alignment lost"})


class FamilySchema(StrictSchema):
    component = fields.Integer()
    prime = fields.Integer()
    members = fields.Integer()
    peng_fan_bound = fields.Integer()
    measured_max_coincidences = fields.Integer(allow_none=True)


class AlignmentSchema(StrictSchema):
    depends_on_alignment = fields.Boolean()
    groups = fields.List(fields.String())
    note = fields.String()


class SequencesSchema(StrictSchema):
    delay_spread_s = fields.Float()
    systems = fields.List(fields.Nested(SequenceSchema))
    pairs = fields.List(fields.Nested(SequencePairSchema))
    families = fields.List(fields.Nested(FamilySchema))
    alignment = fields.Nested(AlignmentSchema)
    notes = fields.List(fields.String())
