"""The re-plan job: prepare the changed site, re-plan from the current plan, turn an unmet requirement into
an error, and answer with the changes, the fresh plan it was measured against, and the assessment."""

from __future__ import annotations

from dataclasses import dataclass

from cohop.assess import SystemFigures
from cohop.errors import Conflict, PlanInfeasible
from cohop.jobs.answers import (AssessmentAnswer, PlannedSystem, assessment_answer, coordination_caution,
                                planned_systems, prepared)
from cohop.jobs.plan import plan_traffic
from cohop.jobs.requests import ReplanRequest
from cohop.jobs.sequence_answers import SequencesAnswer, sequences_answer
from cohop.deadline import Deadline
from cohop.planning.engine import PlanResult, SolveSettings, evaluated_objective
from cohop.planning.replan import ReplanMode, ReplanResult, replan_site


@dataclass(frozen=True)
class SystemChange:
    id: str
    status: str  # "kept", "changed" or "new system"
    dropped: list[int]
    added: list[int]
    sequence_changed: bool
    before: SystemFigures | None  # the current plan on the changed site; None for a new system
    after: SystemFigures


@dataclass(frozen=True)
class FreshPlan:
    """The plan from scratch on the changed site that sets the tolerance's target."""

    result: PlanResult
    plan: tuple[PlannedSystem, ...]


@dataclass(frozen=True)
class ReplanAnswer:
    result: ReplanResult
    mode: ReplanMode
    cautions: tuple[str, ...]
    evaluated_objective: float
    plan: tuple[PlannedSystem, ...]
    diff: tuple[SystemChange, ...]
    fresh: FreshPlan
    sequences: SequencesAnswer
    assessment: AssessmentAnswer


def _changes(result: ReplanResult) -> tuple[SystemChange, ...]:
    before = {f.id: f for f in result.before.systems}
    after = {f.id: f for f in result.assessment.systems}
    return tuple(SystemChange(d.id, d.status, d.dropped, d.added, d.sequence_changed,
                              None if d.status == "new system" else before[d.id], after[d.id]) for d in result.diffs)


def replan_answer(result: ReplanResult, mode: ReplanMode) -> ReplanAnswer:
    prep = result.assessment.prepared
    caution = coordination_caution(prep.profile, result.instance.req.coordination, result.sequences)
    assessment = assessment_answer(result.assessment, caution, traffic=plan_traffic(result))
    return ReplanAnswer(result=result, mode=mode, cautions=assessment.cautions,
                        evaluated_objective=evaluated_objective(result.instance, result.assessment),
                        plan=planned_systems(prep, result.hop_sets), diff=_changes(result),
                        fresh=FreshPlan(result.fresh, planned_systems(prep, result.fresh.hop_sets)),
                        sequences=sequences_answer(result.sequences, result.assessment), assessment=assessment)


def run_replan(req: ReplanRequest, settings: SolveSettings, deadline: Deadline | None = None) -> ReplanAnswer:
    result = replan_site(prepared(req.site), req.requirements, list(req.current), req.mode, settings, deadline)
    if result.violations:
        raise PlanInfeasible([Conflict(v.requirement, v.systems, v.detail, relax="raise the time limit or the "
                                       "change budget, or relax this requirement") for v in result.violations],
                             proven=False)
    return replan_answer(result, req.mode)
