"""The re-plan job: prepare the changed site, re-plan from the current plan, turn an unmet requirement into
an error, and answer with the changes, the fresh plan it was measured against, and the assessment."""

from __future__ import annotations

from dataclasses import dataclass, replace

from cohop.assess import SystemFigures
from cohop.errors import Conflict, PlanInfeasible
from cohop.jobs.answers import (AssessmentAnswer, PlannedSystem, SystemHeadroom, assessment_answer,
                                coordination_caution, headroom_answer, planned_systems, prepared)
from cohop.jobs.plan import plan_traffic
from cohop.jobs.requests import ReplanRequest
from cohop.jobs.sequence_answers import SequencesAnswer, sequences_answer
from cohop.deadline import Deadline
from cohop.planning.engine import PlanResult, SolveSettings, evaluated_objective
from cohop.planning.independent import replan_independent
from cohop.planning.instance import build_instance
from cohop.planning.requirements import PlanRequirements
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
    headroom: tuple[SystemHeadroom, ...] = ()  # per system: channels it can lose before its regulatory minimum


def _changes(result: ReplanResult) -> tuple[SystemChange, ...]:
    before = {f.id: f for f in result.before.systems}
    after = {f.id: f for f in result.assessment.systems}
    return tuple(SystemChange(d.id, d.status, d.dropped, d.added, d.sequence_changed,
                              None if d.status == "new system" else before[d.id], after[d.id]) for d in result.diffs)


def replan_answer(result: ReplanResult, mode: ReplanMode) -> ReplanAnswer:
    prep = result.assessment.prepared
    caution = coordination_caution(prep.profile, result.instance.req.coordination, result.sequences)
    orders = None if result.sequences is None else result.sequences.orders  # for moving systems' figures
    assessment = assessment_answer(result.assessment, caution, hop_orders=orders, traffic=plan_traffic(result))
    return ReplanAnswer(result=result, mode=mode, cautions=assessment.cautions,
                        evaluated_objective=evaluated_objective(result.instance, result.assessment),
                        plan=planned_systems(prep, result.hop_sets), diff=_changes(result),
                        fresh=FreshPlan(result.fresh, planned_systems(prep, result.fresh.hop_sets)),
                        sequences=sequences_answer(result.sequences, result.assessment), assessment=assessment,
                        headroom=headroom_answer(result.instance.headroom, result.hop_sets))


def replan_requirements(prep, req: PlanRequirements, current) -> PlanRequirements:
    """The band's default spare channels never force channels onto a system already on air: in a re-plan, a
    system that states no spare_channels gets at most the spare its current hop set holds (its current count
    less its regulatory minimum); spare_channels stated in the request apply as given."""
    counts = {c.system: len(set(c.hop_set)) for c in current}
    if not any(req.for_system(sid).spare_channels is None for sid in counts):
        return req
    systems = []
    for room in build_instance(prep, req).headroom:
        r = req.for_system(room.system)
        if r.spare_channels is None and room.system in counts:
            held = max(0, counts[room.system] - room.regulatory_min_channels)
            r = replace(r, spare_channels=min(room.spare_applied, held))
        systems.append(r)
    return replace(req, systems=tuple(systems))


def run_replan(req: ReplanRequest, settings: SolveSettings, deadline: Deadline | None = None) -> ReplanAnswer:
    prep = prepared(req.site)
    requirements = replan_requirements(prep, req.requirements, req.current)
    if requirements.coordination == "independent":  # each affected system re-adapts on its own
        result = replan_independent(prep, requirements, list(req.current), req.mode, settings, deadline)
    else:
        result = replan_site(prep, requirements, list(req.current), req.mode, settings, deadline)
    if result.violations:
        raise PlanInfeasible([Conflict(v.requirement, v.systems, v.detail, relax="raise the time limit or the "
                                       "change budget, or relax this requirement") for v in result.violations],
                             proven=False)
    return replan_answer(result, req.mode)
