"""The plan job: prepare the site, plan, turn an unmet requirement into an error, and answer with the plan,
its assessment, the baselines and the comparison with them."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from cohop.assess import SystemFigures
from cohop.errors import Conflict, PlanInfeasible
from cohop.jobs.answers import (AssessmentAnswer, CoordinationComparison, PlannedSystem, SystemHeadroom,
                                assessment_answer, coordination_caution, headroom_answer, planned_systems, prepared,
                                side_by_side)
from cohop.jobs.requests import PlanRequest
from cohop.jobs.sequence_answers import SequencesAnswer, sequences_answer
from cohop.deadline import Deadline
from cohop.planning.independent import IndependentPlanResult
from cohop.planning.engine import NO_PLAN, BaselineResult, PlanResult, SolveSettings, evaluated_objective
from cohop.planning.objectives import ObjectiveValues, objective_values, plan_for_objective
from cohop.planning.requirements import Progress
from cohop.planning.validate import Violation
from cohop.traffic.figures import site_traffic


@dataclass(frozen=True)
class BaselineAnswer:
    """A practitioner's plan, evaluated: its objective and what it misses of the requirements."""

    name: str
    objective: float | None  # evaluated objective; None when no plan was built
    meets_requirements: bool
    violations: tuple[Violation, ...]
    systems: tuple[SystemFigures, ...]


@dataclass(frozen=True)
class Comparison:
    best_baseline: str | None
    best_baseline_objective: float | None
    plan_objective: float
    ratio: float | None  # plan / best baseline, evaluated objectives; None without a positive baseline


@dataclass(frozen=True)
class PlanAnswer:
    result: PlanResult
    coordination: str
    cautions: tuple[str, ...]
    plan: tuple[PlannedSystem, ...]
    sequences: SequencesAnswer | None
    assessment: AssessmentAnswer
    baselines: tuple[BaselineAnswer, ...]
    comparison: Comparison
    objectives: ObjectiveValues  # every objective's value for the plan, on its evaluated figures
    headroom: tuple[SystemHeadroom, ...] = ()  # per system: channels it can lose before its regulatory minimum
    independent: CoordinationComparison | None = None  # independent coordination: the joint plan beside it


def baseline_answer(b: BaselineResult) -> BaselineAnswer:
    systems = () if b.assessment is None else b.assessment.systems
    return BaselineAnswer(b.name, b.objective, not b.violations, tuple(b.violations), systems)


def compare(plan_objective: float, baselines: list[BaselineResult]) -> Comparison:
    """The plan against the best baseline that was built, on their evaluated objectives."""
    scored = [b for b in baselines if b.objective is not None]
    best = min(scored, key=lambda b: b.objective) if scored else None
    ratio = plan_objective / best.objective if best is not None and best.objective > 0 else None
    return Comparison(best.name if best else None, best.objective if best else None, plan_objective, ratio)


def plan_traffic(result) -> tuple:
    """The traffic figures of a plan or re-plan along its own sequences (re-checking the traffic ceilings the
    planner used; `cohop.traffic`); () when no system gives traffic or no sequences were built."""
    prep = result.assessment.prepared
    if result.sequences is None or not any(s.traffic is not None for s in prep.site.systems):
        return ()
    return site_traffic(prep, [np.asarray(h) for h in result.hop_sets], result.sequences.orders,
                        ["planned"] * prep.n_systems)


def plan_answer(result: PlanResult) -> PlanAnswer:
    prep = result.assessment.prepared
    coordination = result.instance.req.coordination
    independent = coordination_comparison(result)
    caution = coordination_caution(prep.profile, coordination, result.sequences) or (
        independent is not None and independent.joint_plan is not None and coordination_caution(prep.profile, "joint"))
    sequences = None if result.sequences is None else sequences_answer(result.sequences, result.assessment)
    orders = None if result.sequences is None else result.sequences.orders  # for moving systems' figures
    assessment = assessment_answer(result.assessment, caution, hop_orders=orders, traffic=plan_traffic(result))
    return PlanAnswer(result=result, coordination=coordination, cautions=assessment.cautions,
                      plan=planned_systems(prep, result.hop_sets), sequences=sequences, assessment=assessment,
                      baselines=tuple(baseline_answer(b) for b in result.baselines),
                      comparison=compare(result.report.evaluated_objective, result.baselines),
                      headroom=headroom_answer(result.instance.headroom, result.hop_sets), independent=independent,
                      objectives=objective_values(result.assessment, result.instance.req))


def coordination_comparison(result: PlanResult) -> CoordinationComparison | None:
    """The joint plan's and the independent plan's figures side by side (independent coordination only); the
    joint plan shown keeps the 15.247(h) caution on the answer (`plan_answer`)."""
    if not isinstance(result, IndependentPlanResult):
        return None
    joint = result.joint
    own = evaluated_objective(result.instance, result.uniform)
    joint_objective = None if joint is None else joint.report.evaluated_objective
    return CoordinationComparison(
        commissioning_order=result.commissioning_order, independent_basis=result.basis, choices=result.choices,
        joint_plan=None if joint is None else planned_systems(result.assessment.prepared, joint.hop_sets),
        joint_objective=joint_objective, independent_objective=own,
        objective_cost=None if joint is None else own - joint_objective,
        systems=side_by_side(None if joint is None else joint.assessment, result.uniform),
        joint_note=result.joint_note)


def run_plan(req: PlanRequest, settings: SolveSettings, progress: Callable[[Progress], None] | None = None,
             deadline: Deadline | None = None) -> PlanAnswer:
    result = plan_for_objective(prepared(req.site), req.requirements, settings, progress, req.detail,
                                deadline=deadline)
    if result.report.status == NO_PLAN:
        raise PlanInfeasible([Conflict(v.requirement, v.systems, v.detail, relax="raise the time limit or relax "
                                       "this requirement") for v in result.violations], proven=False)
    return plan_answer(result)
