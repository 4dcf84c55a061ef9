"""Response schemas of hopping sequences and their sequence-driven figures (they dump
`cohop.jobs.sequence_answers.SequencesAnswer`)."""

from __future__ import annotations

from marshmallow import fields

from cohop.api.schemas.dump import Part
from cohop.api.schemas.site import StrictSchema


class FamilyRefSchema(StrictSchema):  # cohop.sequences.construct.Sequence
    component = fields.Integer()
    prime = fields.Integer()
    member = fields.Integer(metadata={"description": "a of s_a(t) = a t mod p"})


class UsesSchema(StrictSchema):  # cohop.sequences.analysis.OrderFigures
    min = fields.Integer(attribute="uses_min")
    max = fields.Integer(attribute="uses_max")


class SpacingSchema(StrictSchema):  # cohop.jobs.sequence_answers.SystemSequence
    min_channels = fields.Integer(attribute="order.min_spacing_channels",
                                  metadata={"description": "Closest consecutive hops (cyclic), grid steps"})
    min_hz = fields.Float(attribute="order.min_spacing_hz")
    required_channels = fields.Integer(attribute="order.required_spacing_channels",
                                       metadata={"description": "Coherence bandwidth in grid steps"})
    required_hz = fields.Float(metadata={"description": "Coherence bandwidth 1/(2 pi sigma_tau)"})
    fading_correlation_max = fields.Float(attribute="order.fading_correlation_max",
                                          metadata={"description": "Envelope correlation at the closest step"})
    fading_correlation_mean = fields.Float(attribute="order.fading_correlation_mean")


class OrderSchema(StrictSchema):  # cohop.sequences.analysis.OrderFigures
    reversal_share = fields.Float()
    distinct_steps = fields.Integer()
    looks_random = fields.Boolean(metadata={"description": "Our screening of 'random in direction and magnitude'"})


class RetrySchema(StrictSchema):  # cohop.sequences.simulate.RetryFigures
    packets = fields.Integer()
    attempt_loss_probability = fields.Float(attribute="attempt_loss")
    residual_loss_probability = fields.Float(attribute="residual_loss",
                                             metadata={"description": "Simulated: every attempt lost"})
    residual_interval = fields.List(fields.Float(), metadata={"description": "95 % Wilson interval"})
    independent_residual_probability = fields.Float(attribute="independent_residual",
                                                    metadata={"description": "attempt loss^(retry_limit + 1)"})


class SystemRetrySchema(RetrySchema):  # cohop.jobs.sequence_answers.SequenceRetries
    analytic_residual_probability = fields.Float(metadata={"description": "From the independent-attempt model"})
    ascending_order = fields.Nested(RetrySchema, metadata={
        "description": "The same hop set in ascending order: what a poor order costs"})
    common_pattern = fields.Nested(RetrySchema, metadata={
        "description": "Every system visiting its own channels in one common rank pattern (that of the first "
                       "system with as many channels), so interleaved neighbours move in step: what a "
                       "correlated neighbour costs"})


class SequenceSchema(StrictSchema):  # cohop.jobs.sequence_answers.SystemSequence
    id = fields.String()
    construction = fields.String(attribute="sequence.construction")
    group = fields.String(allow_none=True, attribute="sequence.group")
    family = fields.Nested(FamilyRefSchema, allow_none=True)
    channels = fields.List(fields.Integer(), attribute="sequence.channels",
                           metadata={"description": "Hop order, one period"})
    centres_hz = fields.List(fields.Float())
    period_hops = fields.Integer(attribute="order.period_hops")
    dwell_s = fields.Float()
    period_s = fields.Float(attribute="order.period_s")
    uses = Part(UsesSchema, of="order")
    spacing = Part(SpacingSchema)
    order = fields.Nested(OrderSchema)
    retries = fields.Nested(SystemRetrySchema)


class SequencePairSchema(StrictSchema):  # cohop.jobs.sequence_answers.SequencePair
    victim = fields.String()
    source = fields.String()
    shared_channels = fields.Integer(attribute="figures.shared_channels")
    coincidences_max = fields.Integer(allow_none=True, attribute="figures.coincidences_max", metadata={
        "description": "Most coincidences per common period at any hop offset (equal dwell only)"})
    common_period_hops = fields.Integer(allow_none=True, attribute="figures.common_period_hops")
    longest_run_hops = fields.Integer(attribute="figures.longest_run",
                                      metadata={"description": "Longest run of the victim's hops in which the source's dwell "
                                                               "lies inside the victim's threshold window (over the "
                                                               "capture threshold on median levels)"})
    aligned = fields.Boolean(attribute="figures.aligned")
    aligned_hit_rate = fields.Float(allow_none=True, attribute="figures.aligned_hit_rate",
                                    metadata={"description": "Exact, in the plan's alignment"})
    unaligned_hit_rate = fields.Float(attribute="figures.unaligned_hit_rate",
                                      metadata={"description": "The same sequences with alignment lost"})


class FamilySchema(StrictSchema):  # cohop.jobs.sequence_answers.FamilySummary
    component = fields.Integer()
    prime = fields.Integer()
    members = fields.Integer()
    peng_fan_bound = fields.Integer()
    measured_max_coincidences = fields.Integer(allow_none=True)


class AlignmentSchema(StrictSchema):  # cohop.jobs.sequence_answers.Alignment
    depends_on_alignment = fields.Boolean()
    groups = fields.List(fields.String())
    note = fields.String()


class SequencesSchema(StrictSchema):  # cohop.jobs.sequence_answers.SequencesAnswer
    delay_spread_s = fields.Float()
    systems = fields.List(fields.Nested(SequenceSchema))
    pairs = fields.List(fields.Nested(SequencePairSchema))
    families = fields.List(fields.Nested(FamilySchema))
    alignment = fields.Nested(AlignmentSchema)
    notes = fields.List(fields.String())
