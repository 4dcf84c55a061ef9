"""Plan request and response schemas (the re-plan's are in `schemas.replan`)."""

from __future__ import annotations

from marshmallow import fields, post_load, validate, validates_schema

from cohop import limits
from cohop.api.schemas.assessment import AssessmentResponseSchema
from cohop.api.schemas.dump import Length
from cohop.api.schemas.fields import IDENTIFIER, Count, List, Number, Text, default
from cohop.api.schemas.problem import ProblemSchema
from cohop.api.schemas.sequences import SequencesSchema
from cohop.api.schemas.site import SiteSchema, StrictSchema, channel_index, raise_problems
from cohop.assess import DETAIL_LEVELS
from cohop.jobs import requests
from cohop.jobs.requests import PlanRequest
from cohop.planning.requirements import BASELINES, COORDINATION, OBJECTIVES, PlanRequirements

_THRESHOLD = default(PlanRequirements, "interferer_threshold")


class SystemRequirementSchema(StrictSchema):
    system = Text(required=True, validate=IDENTIFIER)
    min_channels = Count(validate=validate.Range(min=1, max=limits.MAX_CHANNELS),
                         metadata={"description": "At least this many channels (default: the profile's minimum)."})
    max_channels = Count(validate=validate.Range(min=1, max=limits.MAX_CHANNELS),
                         metadata={"description": "At most this many (default: the minimum, i.e. an exact count)."})
    excluded_channels = List(channel_index(), load_default=list, max_length=limits.MAX_CHANNELS)
    pinned_channels = List(channel_index(), load_default=list, max_length=limits.MAX_CHANNELS,
                           metadata={"description": "Channels the system must keep (a pin overrides an "
                                                    "interferer exclusion, not an explicit one)."})
    max_attempt_loss = Number(limits.FRACTION, metadata={"description": "Ceiling on per-attempt loss."})
    max_residual_loss = Number(limits.FRACTION,
                               metadata={"description": "Ceiling on loss after the retry limit."})

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(requests.system_requirement_problems(data))


class RequirementsSchema(StrictSchema):
    systems = List(fields.Nested(SystemRequirementSchema), load_default=list, max_length=limits.MAX_SYSTEMS)
    interferer_threshold = Number(limits.FRACTION, load_default=_THRESHOLD,
                                  metadata={"description": "A channel is excluded for a system when a fixed "
                                                           "interferer's predicted hit probability there exceeds "
                                                           f"this (default {_THRESHOLD})."})
    guard_excess_db = Number(limits.GUARD_EXCESS_DB, load_default=default(PlanRequirements, "guard_excess_db"),
                             metadata={"description": "Pairs whose excess reaches this keep entirely out of each "
                                                      "other's harmful windows (default: no guard)."})
    coordination = Text(load_default=default(PlanRequirements, "coordination"), validate=validate.OneOf(COORDINATION),
                        metadata={"description": "joint: systems planned together; independent: each only "
                                                 "avoids measured occupancy and its own exclusions."})
    objective = Text(load_default=default(PlanRequirements, "objective"), validate=validate.OneOf(OBJECTIVES))

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(requests.requirements_problems(data))


class SearchSchema(StrictSchema):
    time_limit_s = Number(limits.TIME_LIMIT_S, load_default=default(PlanRequirements, "time_limit_s"),
                          metadata={"description": "Search budget; clamped by the server's cap."})
    seed = Count(limits.SEED, load_default=default(PlanRequirements, "seed"))
    target_gap = Number(limits.FRACTION, load_default=default(PlanRequirements, "target_gap"),
                        metadata={"description": "The search stops as soon as its plan is proven within this relative "
                                                 "gap of the best possible (linearised objective; default "
                                                 f"{default(PlanRequirements, 'target_gap')})."})
    sequence_packets = Count(limits.SEQUENCE_PACKETS, load_default=default(PlanRequirements, "sequence_packets"),
                             metadata={"description": "Simulated packets per system for the sequence-driven "
                                                      "retry figures"})


class PlanRequestSchema(StrictSchema):
    site = fields.Nested(SiteSchema, required=True)
    requirements = fields.Nested(RequirementsSchema, load_default=None)
    search = fields.Nested(SearchSchema, load_default=None)
    baselines = List(Text(validate=validate.OneOf(BASELINES + ("all",))), load_default=list,
                     max_length=limits.MAX_BASELINES,
                     metadata={"description": "Practitioners' plans to evaluate beside the optimised one."})
    detail = Text(load_default=default(PlanRequest, "detail"), validate=validate.OneOf(DETAIL_LEVELS))

    @post_load
    def _make(self, data, **kwargs) -> PlanRequest:
        req = requests.plan_request_from(data, data["site"])
        raise_problems(requests.plan_request_problems(req))
        return req


# --- response: dumps cohop.jobs.plan.PlanAnswer ------------------------------

class PlannedSystemSchema(StrictSchema):  # cohop.jobs.answers.PlannedSystem
    id = fields.String()
    hop_set = fields.List(fields.Integer())
    centres_hz = fields.List(fields.Float())
    channel_count = Length(of="hop_set")


class SolverReportSchema(StrictSchema):  # cohop.planning.engine.SolverReport
    status = fields.String(metadata={"description": "optimal, feasible (the limit ended the search), or "
                                                    "no plan found in time"})
    objective = fields.Float(metadata={"description": "The planner's linearised objective of the plan (never below "
                                                      "the evaluated figure; with independent coordination, each "
                                                      "system's own interferer exposure)"})
    bound = fields.Float(metadata={"description": "Proven lower bound on that objective"})
    gap = fields.Float(allow_none=True, metadata={"description": "(objective - bound) / objective"})
    bounds = fields.Dict(keys=fields.String(), values=fields.Float(),
                         metadata={"description": "Bound from each method (cp_sat, column_generation, lagrangian)"})
    evaluated_objective = fields.Float(metadata={"description": "The same objective on the evaluated figures"})
    linearisation_error = fields.Float(metadata={"description": "The linearised estimate of the request's "
                                                                "objective minus evaluated_objective (>= 0)"})
    objective_kind = fields.String()
    time_s = fields.Float()
    time_limit_s = fields.Float()
    method = fields.String()
    scale_factor = fields.Float(metadata={"description": "Integer scaling of costs in the CP-SAT model"})
    max_relative_rounding = fields.Float(attribute="rounding")
    workers = fields.Integer()
    deterministic = fields.Boolean()
    requested_time_limit_s = fields.Float(metadata={"description": "The request's time limit; time_limit_s is "
                                                                   "lower when the server's cap clamped it"})
    stopped_by_wall_clock = fields.Boolean(metadata={"description": "A phase was cut short by the wall clock "
                                                                    "(a busy machine): the same request and seed "
                                                                    "may then give another plan"})
    work = fields.Dict(keys=fields.String(), values=fields.Float(), metadata={
        "description": "Work done: kicks (local search), kicks_from_bound (local search from the Lagrangian bound's "
                       "plans), cp_sat_deterministic_time, pricing_operations (column generation), dp_operations "
                       "(Lagrangian bound: DP states and transition pairs)"})
    binding = fields.List(fields.String(), metadata={"description": "Requirements the plan presses against"})
    notes = fields.List(fields.String())


class ViolationSchema(StrictSchema):  # cohop.planning.validate.Violation
    requirement = fields.String()
    systems = fields.List(fields.String())
    detail = fields.String()


class BaselineSystemSchema(StrictSchema):  # cohop.assess.SystemFigures
    id = fields.String()
    channel_count = Length(of="hop_set")
    collision_probability = fields.Float()
    residual_loss_probability = fields.Float()


class BaselineSchema(StrictSchema):  # cohop.jobs.plan.BaselineAnswer
    name = fields.String()
    objective = fields.Float(allow_none=True, metadata={"description": "Evaluated objective"})
    meets_requirements = fields.Boolean()
    violations = fields.List(fields.Nested(ViolationSchema))
    systems = fields.List(fields.Nested(BaselineSystemSchema))


class ComparisonSchema(StrictSchema):  # cohop.jobs.plan.Comparison
    best_baseline = fields.String(allow_none=True)
    best_baseline_objective = fields.Float(allow_none=True)
    plan_objective = fields.Float()
    ratio = fields.Float(allow_none=True, metadata={"description": "plan / best baseline, evaluated objectives"})


class PlanResponseSchema(StrictSchema):  # cohop.jobs.plan.PlanAnswer
    cautions = fields.List(fields.String())
    coordination = fields.String()
    plan = fields.List(fields.Nested(PlannedSystemSchema))
    solver = fields.Nested(SolverReportSchema, attribute="result.report")
    sequences = fields.Nested(SequencesSchema, metadata={"description": "A hopping sequence per system, ready "
                                                                       "to load, with sequence-driven figures"})
    assessment = fields.Nested(AssessmentResponseSchema)
    baselines = fields.List(fields.Nested(BaselineSchema))
    comparison = fields.Nested(ComparisonSchema)


class ConflictSchema(StrictSchema):
    requirement = fields.String()
    systems = fields.List(fields.String())
    detail = fields.String()
    citation = fields.String(allow_none=True)
    channels = fields.List(fields.List(fields.Integer()), metadata={"description": "Inclusive channel ranges"})
    relax = fields.String(metadata={"description": "What to relax"})


class InfeasibleProblemSchema(ProblemSchema):
    conflicts = fields.List(fields.Nested(ConflictSchema))
    proven = fields.Boolean(metadata={"description": "false: none found in time, not proven impossible"})
