"""Plan request and response schemas."""

from __future__ import annotations

import marshmallow as ma
from marshmallow import fields, post_load, validate, validates_schema

from cohop import limits
from cohop.api.schemas.assessment import AssessmentResponseSchema
from cohop.api.schemas import bounds
from cohop.api.schemas.fields import IDENTIFIER, Count, List, Number, Text
from cohop.api.schemas.problem import ProblemSchema
from cohop.api.schemas.sequences import SequencesSchema
from cohop.api.schemas.site import ErrorTree, SiteSchema, StrictSchema, channel_index
from cohop.assess import DETAIL_LEVELS
from cohop.planning.requirements import (BASELINES, COORDINATION, DEFAULT_INTERFERER_THRESHOLD,
                                         DEFAULT_SEQUENCE_PACKETS, OBJECTIVES, PlanRequirements, SystemRequirement)

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
    def _consistent(self, data, **kwargs):
        errors = ErrorTree()
        lo, hi = data.get("min_channels"), data.get("max_channels")
        if lo is not None and hi is not None and hi < lo:
            errors.add(("max_channels",), "Must not be below min_channels.")
        both = set(data["excluded_channels"]) & set(data["pinned_channels"])
        if both:
            errors.add(("pinned_channels",), f"Channels {sorted(both)} are both pinned and excluded.")
        for name in ("excluded_channels", "pinned_channels"):
            if len(set(data[name])) != len(data[name]):
                errors.add((name,), "Channels must not repeat.")
        errors.raise_if_any()

    @post_load
    def _make(self, data, **kwargs):
        data["excluded_channels"] = tuple(data["excluded_channels"])
        data["pinned_channels"] = tuple(data["pinned_channels"])
        return SystemRequirement(**data)


class RequirementsSchema(StrictSchema):
    systems = List(fields.Nested(SystemRequirementSchema), load_default=list, max_length=limits.MAX_SYSTEMS)
    interferer_threshold = Number(limits.FRACTION, load_default=DEFAULT_INTERFERER_THRESHOLD,
                                  metadata={"description": "A channel is excluded for a system when a fixed "
                                                           "interferer's predicted hit probability there exceeds "
                                                           f"this (default {DEFAULT_INTERFERER_THRESHOLD})."})
    guard_excess_db = Number(limits.GUARD_EXCESS_DB, load_default=None,
                             metadata={"description": "Pairs whose excess reaches this keep entirely out of each "
                                                      "other's harmful windows (default: no guard)."})
    coordination = Text(load_default="joint", validate=validate.OneOf(COORDINATION),
                        metadata={"description": "joint: systems planned together; independent: each only "
                                                 "avoids measured occupancy and its own exclusions."})
    objective = Text(load_default="weighted_sum", validate=validate.OneOf(OBJECTIVES))

    @validates_schema
    def _unique(self, data, **kwargs):
        ids = [r.system for r in data["systems"]]
        if len(set(ids)) != len(ids):
            raise ma.ValidationError("One entry per system.", field_name="systems")


class SearchSchema(StrictSchema):
    time_limit_s = Number(limits.TIME_LIMIT_S, load_default=10.0,
                          metadata={"description": "Search budget; clamped by the server's cap."})
    seed = Count(limits.SEED, load_default=0)
    sequence_packets = Count(limits.SEQUENCE_PACKETS, load_default=DEFAULT_SEQUENCE_PACKETS,
                             metadata={"description": "Simulated packets per system for the sequence-driven "
                                                      "retry figures"})


class PlanRequestSchema(StrictSchema):
    site = fields.Nested(SiteSchema, required=True)
    requirements = fields.Nested(RequirementsSchema, load_default=None)
    search = fields.Nested(SearchSchema, load_default=None)
    baselines = List(Text(validate=validate.OneOf(BASELINES + ("all",))), load_default=list,
                     max_length=limits.MAX_BASELINES,
                            metadata={"description": "Practitioners' plans to evaluate beside the optimised one."})
    detail = Text(load_default="channel", validate=validate.OneOf(DETAIL_LEVELS))

    @validates_schema
    def _simulated_hops(self, data, **kwargs):
        errors = ErrorTree()
        search = data.get("search") or {}
        packets = search.get("sequence_packets", DEFAULT_SEQUENCE_PACKETS)
        bounds.check_simulated_hops(errors.add, data["site"].systems, packets)
        errors.raise_if_any()

    @validates_schema
    def _references(self, data, **kwargs):
        site, req = data["site"], data.get("requirements")
        if req is None:
            return
        errors = ErrorTree()
        ids = {s.id for s in site.systems}
        for i, r in enumerate(req["systems"]):
            if r.system not in ids:
                errors.add(("requirements", "systems", i, "system"), f"Unknown system {r.system!r}.")
            for name in ("excluded_channels", "pinned_channels"):
                for j, c in enumerate(getattr(r, name)):
                    if c >= site.grid.count:
                        errors.add(("requirements", "systems", i, name, j), f"Channel {c} is off the grid.")
        errors.raise_if_any()

    @post_load
    def _make(self, data, **kwargs):
        req = data.get("requirements") or {}
        search = data.get("search") or {}
        names = tuple(BASELINES) if "all" in data["baselines"] else tuple(dict.fromkeys(data["baselines"]))
        requirements = PlanRequirements(
            systems=tuple(req.get("systems", ())),
            interferer_threshold=req.get("interferer_threshold", DEFAULT_INTERFERER_THRESHOLD),
            guard_excess_db=req.get("guard_excess_db"), coordination=req.get("coordination", "joint"),
            objective=req.get("objective", "weighted_sum"), time_limit_s=search.get("time_limit_s", 10.0),
            seed=search.get("seed", 0), baselines=names,
            sequence_packets=search.get("sequence_packets", DEFAULT_SEQUENCE_PACKETS))
        return {"site": data["site"], "requirements": requirements, "detail": data["detail"]}


# --- response ---------------------------------------------------------------

class PlannedSystemSchema(StrictSchema):
    id = fields.String()
    hop_set = fields.List(fields.Integer())
    centres_hz = fields.List(fields.Float())
    channel_count = fields.Integer()


class SolverReportSchema(StrictSchema):
    status = fields.String(metadata={"description": "optimal, feasible (the limit ended the search), or "
                                                    "no plan found in time"})
    objective = fields.Float(metadata={"description": "The planner's linearised objective of the plan (never below "
                                                      "the evaluated figure; with independent coordination, each "
                                                      "system's own interferer exposure)"})
    bound = fields.Float(metadata={"description": "Proven lower bound on that objective"})
    gap = fields.Float(allow_none=True, metadata={"description": "(objective - bound) / objective"})
    bounds = fields.Dict(keys=fields.String(), values=fields.Float(),
                         metadata={"description": "Bound from each method (cp_sat, column_generation)"})
    evaluated_objective = fields.Float(metadata={"description": "The same objective on the evaluated figures"})
    linearisation_error = fields.Float(metadata={"description": "The linearised estimate of the request's "
                                                                "objective minus evaluated_objective (>= 0)"})
    objective_kind = fields.String()
    time_s = fields.Float()
    time_limit_s = fields.Float()
    method = fields.String()
    scale_factor = fields.Float(metadata={"description": "Integer scaling of costs in the CP-SAT model"})
    max_relative_rounding = fields.Float()
    workers = fields.Integer()
    deterministic = fields.Boolean()
    requested_time_limit_s = fields.Float(metadata={"description": "The request's time limit; time_limit_s is "
                                                                   "lower when the server's cap clamped it"})
    stopped_by_wall_clock = fields.Boolean(metadata={"description": "A phase was cut short by the wall clock "
                                                                    "(a busy machine): the same request and seed "
                                                                    "may then give another plan"})
    work = fields.Dict(keys=fields.String(), values=fields.Float(), metadata={
        "description": "Work done: kicks (local search), cp_sat_deterministic_time, pricing_operations (bound)"})
    binding = fields.List(fields.String(), metadata={"description": "Requirements the plan presses against"})
    notes = fields.List(fields.String())


class ViolationSchema(StrictSchema):
    requirement = fields.String()
    systems = fields.List(fields.String())
    detail = fields.String()


class BaselineSystemSchema(StrictSchema):
    id = fields.String()
    channel_count = fields.Integer()
    collision_probability = fields.Float()
    residual_loss_probability = fields.Float()


class BaselineSchema(StrictSchema):
    name = fields.String()
    objective = fields.Float(allow_none=True, metadata={"description": "Evaluated objective"})
    meets_requirements = fields.Boolean()
    violations = fields.List(fields.Nested(ViolationSchema))
    systems = fields.List(fields.Nested(BaselineSystemSchema))


class ComparisonSchema(StrictSchema):
    best_baseline = fields.String(allow_none=True)
    best_baseline_objective = fields.Float(allow_none=True)
    plan_objective = fields.Float()
    ratio = fields.Float(allow_none=True, metadata={"description": "plan / best baseline, evaluated objectives"})


class PlanResponseSchema(StrictSchema):
    cautions = fields.List(fields.String())
    coordination = fields.String()
    plan = fields.List(fields.Nested(PlannedSystemSchema))
    solver = fields.Nested(SolverReportSchema)
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



# --- re-planning ------------------------------------------------------------

class CurrentSystemSchema(StrictSchema):
    id = Text(required=True, validate=IDENTIFIER)
    hop_set = List(channel_index(), required=True, min_length=1, max_length=limits.MAX_CHANNELS)
    sequence = List(channel_index(), load_default=None, min_length=1, max_length=limits.MAX_SEQUENCE_HOPS,
                           metadata={"description": "Kept when the hop set does not change"})

    @validates_schema
    def _consistent(self, data, **kwargs):
        if len(set(data["hop_set"])) != len(data["hop_set"]):
            raise ma.ValidationError("Channels must not repeat.", field_name="hop_set")
        if data.get("sequence") is not None and set(data["sequence"]) != set(data["hop_set"]):
            raise ma.ValidationError("Must visit exactly the channels of hop_set.", field_name="sequence")


class CurrentPlanSchema(StrictSchema):
    systems = List(fields.Nested(CurrentSystemSchema), required=True, min_length=1, max_length=limits.MAX_SYSTEMS)


class ReplanModeSchema(StrictSchema):
    kind = Text(load_default="tolerance", validate=validate.OneOf(("tolerance", "budget")),
                metadata={"description": "tolerance: fewest changes within the tolerance of a fresh plan; "
                                         "budget: best plan with at most max_changes changes"})
    tolerance = Number(limits.REPLAN_TOLERANCE, load_default=0.05, metadata={
        "description": "Objective at most (1 + tolerance) x the fresh plan's (default 0.05)"})
    max_changes = Count(limits.MAX_CHANGES, load_default=None)

    @validates_schema
    def _budget(self, data, **kwargs):
        if data["kind"] == "budget" and data.get("max_changes") is None:
            raise ma.ValidationError("The budget mode needs max_changes.", field_name="max_changes")


class ReplanRequestSchema(PlanRequestSchema):
    current = fields.Nested(CurrentPlanSchema, required=True,
                            metadata={"description": "The plan the radios use now (hop sets and sequences)"})
    mode = fields.Nested(ReplanModeSchema, load_default=None)

    @validates_schema
    def _current_ids(self, data, **kwargs):
        errors = ErrorTree()
        grid = data["site"].grid
        seen = set()
        for i, c in enumerate(data["current"]["systems"]):
            if c["id"] in seen:
                errors.add(("current", "systems", i, "id"), f"Duplicate id {c['id']!r}.")
            seen.add(c["id"])
            for name in ("hop_set", "sequence"):
                for j, ch in enumerate(c.get(name) or ()):
                    if ch >= grid.count:
                        errors.add(("current", "systems", i, name, j), f"Channel {ch} is off the grid.")
        errors.raise_if_any()

    @post_load
    def _make(self, data, **kwargs):
        from cohop.planning.replan import CurrentSystem, ReplanMode

        current = data.pop("current")
        mode = data.pop("mode") or {}
        out = super()._make(data, **kwargs)
        out["current"] = [CurrentSystem(c["id"], tuple(c["hop_set"]), None if c.get("sequence") is None
                                        else tuple(c["sequence"])) for c in current["systems"]]
        out["mode"] = ReplanMode(kind=mode.get("kind", "tolerance"), tolerance=mode.get("tolerance", 0.05),
                                 max_changes=mode.get("max_changes"))
        return out


class SystemDiffSchema(StrictSchema):
    id = fields.String()
    status = fields.String(metadata={"description": "kept, changed or new system"})
    dropped = fields.List(fields.Integer())
    added = fields.List(fields.Integer())
    sequence_changed = fields.Boolean()
    before = fields.Dict(keys=fields.String(), values=fields.Float(), allow_none=True, metadata={
        "description": "collision_probability and residual_loss_probability of the current plan on the changed "
                       "site"})
    after = fields.Dict(keys=fields.String(), values=fields.Float())


class ChangesSchema(StrictSchema):
    count = fields.Integer(metadata={"description": "Channels newly set on existing systems"})
    lower_bound = fields.Integer(metadata={"description": "No plan meeting the requirements changes fewer"})
    proven_minimal = fields.Boolean()
    removed_systems = fields.List(fields.String())


class FreshSchema(StrictSchema):
    objective = fields.Float()
    evaluated_objective = fields.Float()
    bound = fields.Float()
    status = fields.String()
    plan = fields.List(fields.Nested(PlannedSystemSchema))
    systems = fields.List(fields.Nested(BaselineSystemSchema))


class ReplanTimeSchema(StrictSchema):
    time_s = fields.Float(metadata={"description": "Time from the request's arrival to the answer's figures"})
    time_limit_s = fields.Float(metadata={"description": "The effective limit (clamped by the server's cap)"})
    requested_time_limit_s = fields.Float()
    stopped_by_wall_clock = fields.Boolean(metadata={"description": "A phase was cut short by the wall clock: "
                                                                    "the same request may then give another "
                                                                    "re-plan"})
    work = fields.Dict(keys=fields.String(), values=fields.Float())


class ReplanResponseSchema(StrictSchema):
    cautions = fields.List(fields.String())
    mode = fields.Dict()
    objective = fields.Float(metadata={"description": "Linearised objective of the re-plan"})
    target_objective = fields.Float(allow_none=True)
    evaluated_objective = fields.Float()
    changes = fields.Nested(ChangesSchema)
    plan = fields.List(fields.Nested(PlannedSystemSchema))
    diff = fields.List(fields.Nested(SystemDiffSchema))
    fresh = fields.Nested(FreshSchema)
    sequences = fields.Nested(SequencesSchema)
    assessment = fields.Nested(AssessmentResponseSchema)
    notes = fields.List(fields.String())
    time = fields.Nested(ReplanTimeSchema)
