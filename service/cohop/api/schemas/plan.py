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
from cohop.planning.requirements import BASELINES, COORDINATION, INDEPENDENT_BASES, OBJECTIVES, PlanRequirements

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
    spare_channels = Count(validate=validate.Range(min=0, max=limits.MAX_CHANNELS), metadata={
        "description": "Channels above the profile's minimum, so that losing some keeps the system compliant "
                       "(default: the channels one typical interferer of the band takes, e.g. a 22 MHz Wi-Fi "
                       "channel at 2.4 GHz, a 2 MHz emitter below 1 GHz; capped by what fits)."})

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
                                                      "other's threshold windows (where the other is over the capture "
                                                      "threshold on median levels; default: no guard)."})
    coordination = Text(load_default=default(PlanRequirements, "coordination"), validate=validate.OneOf(COORDINATION),
                        metadata={"description": "joint: systems planned together; independent: each only "
                                                 "avoids measured occupancy and its own exclusions."})
    commissioning_order = List(Text(validate=IDENTIFIER), load_default=list, max_length=limits.MAX_SYSTEMS,
                               metadata={"description": "independent coordination: the order systems go on air "
                                                        "(each adapts to those before it); systems not named "
                                                        "follow in the site's order."})
    independent_basis = Text(load_default=default(PlanRequirements, "independent_basis"),
                             validate=validate.OneOf(INDEPENDENT_BASES),
                             metadata={"description": "independent coordination: occupancy (avoid the interferers "
                                                      "and the occupancy of systems already on air above "
                                                      "interferer_threshold) or interferers (those alone)."})
    objective = Text(load_default=default(PlanRequirements, "objective"), validate=validate.OneOf(OBJECTIVES),
                     metadata={"description": "weighted_sum: priority-weighted per-hop collision; worst_system: the "
                                              "worst system's per-hop collision (both minimised and bounded by the "
                                              "linear planner); residual_loss: priority-weighted residual loss "
                                              "after retries, reached by sensitivity-weighted rounds of the linear "
                                              "planner; worst_margin: the largest share of a system's loss "
                                              "ceiling its evaluated loss takes (needs a ceiling), reached the "
                                              "same way (no bound proven for either)."})

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
                       "(Lagrangian bound: DP states and transition pairs), objective_rounds (rounds of the linear "
                       "planner: residual_loss, worst_margin)"})
    binding = fields.List(fields.String(), metadata={"description": "Requirements the plan presses against; a loss "
                                                     "ceiling it does not meet says NOT met"})
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


class HeadroomSchema(StrictSchema):  # cohop.jobs.answers.SystemHeadroom
    id = fields.String()
    channel_count = fields.Integer()
    regulatory_min_channels = fields.Integer(metadata={"description": "The least count the profile accepts"})
    can_lose_channels = fields.Integer(metadata={"description": "channel_count - regulatory_min_channels: channels "
                                                                "the system can lose and stay compliant"})
    spare_channels_asked = fields.Integer()
    spare_channels_default = fields.Boolean(metadata={"description": "The band's default was used"})
    spare_channels_applied = fields.Integer()
    spare_capped_by = fields.String(allow_none=True, metadata={"description": "fit (not enough channels the system "
                                                                             "may use) or max_channels"})
    typical_interferer = fields.String(allow_none=True, metadata={"description": "What the default is sized for"})


class SystemChoiceSchema(StrictSchema):  # cohop.planning.independent.SystemChoice
    system = fields.String()
    position = fields.Integer(metadata={"description": "In the commissioning order, 0 first"})
    may_use = fields.Integer(metadata={"description": "Channels allowed to it (band, profile, interferers, its "
                                                      "own exclusions)"})
    avoided_occupancy = fields.List(fields.List(fields.Integer()), metadata={
        "description": "Inclusive channel ranges avoided for the occupancy of systems already on air"})
    occupied_by = fields.List(fields.String())
    taken_back = fields.Integer(metadata={"description": "Avoided channels taken back to reach its minimum"})
    channel_count = fields.Integer()
    limited_by = fields.String(allow_none=True, metadata={"description": "Why not every channel it may use: "
                                                                        "max_channels or separation"})


class SideBySideSchema(StrictSchema):  # cohop.jobs.answers.SideBySide
    id = fields.String()
    joint_channel_count = fields.Integer(allow_none=True)
    joint_collision_probability = fields.Float(allow_none=True)
    joint_residual_loss_probability = fields.Float(allow_none=True)
    independent_channel_count = fields.Integer()
    independent_collision_probability = fields.Float()
    independent_residual_loss_probability = fields.Float()
    cost_of_independence = fields.Float(allow_none=True, metadata={"description": "Independent minus joint "
                                                                                  "per-hop collision probability"})


class CoordinationComparisonSchema(StrictSchema):  # cohop.jobs.answers.CoordinationComparison
    basis = fields.String(metadata={"description": "How both plans' figures here were evaluated"})
    commissioning_order = fields.List(fields.String())
    independent_basis = fields.String()
    choices = fields.List(fields.Nested(SystemChoiceSchema))
    joint_plan = fields.List(fields.Nested(PlannedSystemSchema), allow_none=True, metadata={
        "description": "The jointly assigned plan, for comparison only (see the 15.247(h) caution)"})
    joint_objective = fields.Float(allow_none=True)
    independent_objective = fields.Float()
    objective_cost = fields.Float(allow_none=True, metadata={"description": "independent_objective - "
                                                                            "joint_objective"})
    systems = fields.List(fields.Nested(SideBySideSchema))
    joint_note = fields.String(allow_none=True)
class ObjectivesSchema(StrictSchema):  # cohop.planning.objectives.ObjectiveValues
    weighted_sum = fields.Float(metadata={"description": "sum of priority_weight x per-hop collision"})
    worst_system = fields.Float(metadata={"description": "the largest per-hop collision"})
    worst_system_id = fields.String(metadata={"description": "the system with that collision"})
    residual_loss = fields.Float(metadata={"description": "sum of priority_weight x residual loss after retries"})
    worst_margin = fields.Float(allow_none=True, metadata={
        "description": "the largest share of a ceiling (max_residual_loss, max_attempt_loss) a system's evaluated "
                       "loss takes (below 1: every ceiling met, by a margin of 1 minus this); null without ceilings"})
    worst_margin_system_id = fields.String(allow_none=True, metadata={"description": "the system with that share"})


class PlanResponseSchema(StrictSchema):  # cohop.jobs.plan.PlanAnswer
    headroom = fields.List(fields.Nested(HeadroomSchema), metadata={
        "description": "Per system: how many channels it can lose before it falls below its regulatory minimum"})
    independent = fields.Nested(CoordinationComparisonSchema, allow_none=True, metadata={
        "description": "independent coordination: the joint plan's and the independent plan's figures side by "
                       "side (null for joint coordination)"})
    cautions = fields.List(fields.String())
    coordination = fields.String()
    plan = fields.List(fields.Nested(PlannedSystemSchema))
    solver = fields.Nested(SolverReportSchema, attribute="result.report")
    sequences = fields.Nested(SequencesSchema, metadata={"description": "A hopping sequence per system, ready "
                                                                       "to load, with sequence-driven figures"})
    assessment = fields.Nested(AssessmentResponseSchema)
    baselines = fields.List(fields.Nested(BaselineSchema))
    comparison = fields.Nested(ComparisonSchema)
    objectives = fields.Nested(ObjectivesSchema, metadata={
        "description": "Every objective's value for this plan, from the assessment's per-system figures "
                       "(solver.objective_kind says which one was minimised)"})


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
