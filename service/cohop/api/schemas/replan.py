"""Re-plan request and response schemas."""

from __future__ import annotations

from marshmallow import fields, post_load, validate, validates_schema

from cohop import limits
from cohop.api.schemas.assessment import AssessmentResponseSchema
from cohop.api.schemas.dump import Part
from cohop.api.schemas.fields import IDENTIFIER, Count, List, Number, Text, default
from cohop.api.schemas.plan import BaselineSystemSchema, HeadroomSchema, PlannedSystemSchema, PlanRequestSchema
from cohop.api.schemas.sequences import SequencesSchema
from cohop.api.schemas.site import StrictSchema, channel_index, raise_problems
from cohop.jobs import requests
from cohop.jobs.requests import ReplanRequest
from cohop.planning.replan import MODES, ReplanMode

_TOLERANCE = default(ReplanMode, "tolerance")


class CurrentSystemSchema(StrictSchema):
    system = Text(required=True, validate=IDENTIFIER, metadata={"description": "The site system this entry is "
                                                                               "(the same spelling as requirements)"})
    hop_set = List(channel_index(), required=True, min_length=1, max_length=limits.MAX_CHANNELS)
    sequence = List(channel_index(), load_default=None, min_length=1, max_length=limits.MAX_SEQUENCE_HOPS,
                    metadata={"description": "Kept when the hop set does not change"})

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(requests.current_system_problems(data))


class CurrentPlanSchema(StrictSchema):
    systems = List(fields.Nested(CurrentSystemSchema), required=True, min_length=1, max_length=limits.MAX_SYSTEMS)


class ReplanModeSchema(StrictSchema):  # loads into, and dumps, cohop.planning.replan.ReplanMode
    kind = Text(load_default=default(ReplanMode, "kind"), validate=validate.OneOf(MODES),
                metadata={"description": "tolerance: fewest changes within the tolerance of a fresh plan; "
                                         "budget: best plan with at most max_changes changes"})
    tolerance = Number(limits.REPLAN_TOLERANCE, load_default=_TOLERANCE, metadata={
        "description": f"Objective at most (1 + tolerance) x the fresh plan's (default {_TOLERANCE})"})
    max_changes = Count(limits.MAX_CHANGES, load_default=default(ReplanMode, "max_changes"))

    @validates_schema
    def _rules(self, data, **kwargs):
        raise_problems(requests.mode_problems(data))


class ReplanRequestSchema(PlanRequestSchema):
    current = fields.Nested(CurrentPlanSchema, required=True,
                            metadata={"description": "The plan the radios use now (hop sets and sequences)"})
    mode = fields.Nested(ReplanModeSchema, load_default=None)

    @post_load
    def _make(self, data, **kwargs) -> ReplanRequest:
        req = requests.replan_request_from(data, data["site"])
        raise_problems(requests.replan_request_problems(req))
        return req


# --- response: dumps cohop.jobs.replan.ReplanAnswer ---------------------------

class LossFiguresSchema(StrictSchema):  # cohop.assess.SystemFigures
    collision_probability = fields.Float()
    residual_loss_probability = fields.Float()


class SystemDiffSchema(StrictSchema):  # cohop.jobs.replan.SystemChange
    id = fields.String()
    status = fields.String(metadata={"description": "kept, changed or new system"})
    dropped = fields.List(fields.Integer())
    added = fields.List(fields.Integer())
    sequence_changed = fields.Boolean()
    before = fields.Nested(LossFiguresSchema, allow_none=True, metadata={
        "description": "The current plan on the changed site; null for a new system"})
    after = fields.Nested(LossFiguresSchema)


class ChangesSchema(StrictSchema):  # cohop.planning.replan.ReplanResult
    count = fields.Integer(attribute="changes", metadata={"description": "Channels newly set on existing systems"})
    lower_bound = fields.Integer(metadata={"description": "No plan meeting the requirements changes fewer"})
    proven_minimal = fields.Boolean()
    removed_systems = fields.List(fields.String(), attribute="removed")


class FreshSchema(StrictSchema):  # cohop.jobs.replan.FreshPlan
    objective = fields.Float(attribute="result.report.objective")
    evaluated_objective = fields.Float(attribute="result.report.evaluated_objective")
    bound = fields.Float(attribute="result.report.bound")
    status = fields.String(attribute="result.report.status")
    plan = fields.List(fields.Nested(PlannedSystemSchema))
    systems = fields.List(fields.Nested(BaselineSystemSchema), attribute="result.assessment.systems")


class ReplanTimeSchema(StrictSchema):  # cohop.planning.replan.ReplanResult
    time_s = fields.Float(metadata={"description": "Time from the request's arrival to the answer's figures"})
    time_limit_s = fields.Float(metadata={"description": "The effective limit (clamped by the server's cap)"})
    requested_time_limit_s = fields.Float()
    stopped_by_wall_clock = fields.Boolean(metadata={"description": "A phase was cut short by the wall clock: "
                                                                    "the same request may then give another "
                                                                    "re-plan"})
    work = fields.Dict(keys=fields.String(), values=fields.Float())


class ReplanResponseSchema(StrictSchema):  # cohop.jobs.replan.ReplanAnswer
    cautions = fields.List(fields.String())
    mode = fields.Nested(ReplanModeSchema)
    objective = fields.Float(attribute="result.objective", metadata={"description": "Linearised objective of the "
                                                                                    "re-plan"})
    target_objective = fields.Float(allow_none=True, attribute="result.target")
    evaluated_objective = fields.Float()
    changes = Part(ChangesSchema, of="result")
    plan = fields.List(fields.Nested(PlannedSystemSchema))
    diff = fields.List(fields.Nested(SystemDiffSchema))
    fresh = fields.Nested(FreshSchema)
    sequences = fields.Nested(SequencesSchema)
    assessment = fields.Nested(AssessmentResponseSchema)
    notes = fields.List(fields.String(), attribute="result.notes")
    time = Part(ReplanTimeSchema, of="result")
    headroom = fields.List(fields.Nested(HeadroomSchema), metadata={
        "description": "Per system: how many channels it can lose before it falls below its regulatory minimum"})
