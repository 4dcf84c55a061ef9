"""Response schema of the traffic figures (`cohop.traffic.figures.TrafficFigures`)."""

from __future__ import annotations

from marshmallow import fields

from cohop.api.schemas.dump import FiniteOrNull
from cohop.api.schemas.site import StrictSchema


class EstimateSchema(StrictSchema):  # cohop.traffic.figures.Estimate
    value = fields.Float()
    interval = fields.List(fields.Float(), metadata={
        "description": "95 % interval over the sampled phases (mean +- 1.96 s / sqrt(samples)); equal to "
                       "[value, value] when every phase was enumerated"})
    dominant_source = fields.String(allow_none=True, metadata={
        "description": "The source (a system, an interferer, or 'fading') whose removal lowers the figure most"})


class QuantileSchema(StrictSchema):  # cohop.traffic.figures.Quantile
    level = fields.Float()
    latency_s = fields.Float(allow_none=True, metadata={
        "description": "null: fewer than this share of messages are ever delivered"})


class RequirementSchema(StrictSchema):  # cohop.site.Traffic
    message_interval_s = fields.Float()
    deadline_s = fields.Float(allow_none=True)
    deadline_probability = fields.Float(allow_none=True)
    watchdog_s = fields.Float(allow_none=True)
    max_stops_per_hour = fields.Float(allow_none=True)


class TrafficFiguresSchema(StrictSchema):  # cohop.traffic.figures.TrafficFigures
    id = fields.String(attribute="system_id")
    caution = fields.String(metadata={"description": "Beside every deadline and stop-rate figure"})
    model = fields.String()
    assumptions = fields.List(fields.String())
    requirement = fields.Nested(RequirementSchema)
    order_origin = fields.String(metadata={"description": "request (given sequence) or planned (built for the "
                                                          "hop set)"})
    order_length = fields.Integer()
    message_interval_s = fields.Float(metadata={"description": "As modelled: whole dwells, at least the span of "
                                                               "every attempt"})
    dwell_s = fields.Float(metadata={"description": "A message waits uniform(0, dwell_s) for its first dwell"})
    attempt_latency_s = fields.List(fields.Float(), metadata={
        "description": "Latency of delivery at attempt k when the message arrives as a dwell starts"})
    delivered_at_attempt = fields.List(fields.Float(), metadata={
        "description": "P(delivered at attempt k); latency CDF(x) = sum_k p_k clip((x - attempt_latency_s_k) / "
                       "dwell_s, 0, 1)"})
    undelivered = fields.Nested(EstimateSchema, metadata={"description": "P(every attempt lost)"})
    latency_quantiles = fields.List(fields.Nested(QuantileSchema))
    lost_attempt_runs = fields.List(fields.Float(), metadata={
        "description": "P(the first n attempts of a message are all lost), n = 1..retry_limit + 1"})
    lost_message_runs_per_hour = fields.List(fields.Float(), metadata={
        "description": "Runs of consecutive lost messages reaching n per hour of operation (each run counted "
                       "once), n = 1.."})
    deadline = fields.Nested(EstimateSchema, allow_none=True, metadata={
        "description": "P(delivered within deadline_s)"})
    deadline_missed = fields.Nested(EstimateSchema, allow_none=True, metadata={
        "description": "P(not delivered within deadline_s), computed as such: 1 - deadline, with all its digits"})
    meets_deadline = fields.Boolean(allow_none=True, metadata={
        "description": "The interval's lower end reaches deadline_probability"})
    watchdog_messages = fields.Integer(allow_none=True, metadata={
        "description": "m = ceil(watchdog_s / message interval): lost messages in a row that stop the machine"})
    stops_per_hour = fields.Nested(EstimateSchema, allow_none=True, metadata={
        "description": "Expected watchdog stops per hour of operation: lost_message_runs_per_hour[m - 1]"})
    meets_stops = fields.Boolean(allow_none=True, metadata={
        "description": "The interval's upper end is within max_stops_per_hour"})
    deadline_clearance = FiniteOrNull(allow_none=True, metadata={
        "description": "Allowed miss share / predicted (interval's worse end): >= 1 clears the requirement; "
                       "null: no requirement or nothing predicted"})
    stops_clearance = FiniteOrNull(allow_none=True, metadata={
        "description": "max_stops_per_hour / predicted (interval's upper end): >= 1 clears; null: no requirement "
                       "or nothing predicted"})
    collision_ceiling = FiniteOrNull(allow_none=True, metadata={
        "description": "Per-hop collision ceiling the planner uses for this requirement (independent surrogate, "
                       "inverted; cohop.traffic.ceiling); null: none; -1: fading alone fails it"})
    collision_probability = fields.Float(metadata={"description": "The hop set's mean per-hop collision"})
    ceiling_binds = fields.Boolean(metadata={"description": "The per-hop collision is within 1 % of the ceiling"})
    phase_samples = fields.Integer()
    exact = fields.Boolean(metadata={"description": "Every phase enumerated (no sampling)"})
