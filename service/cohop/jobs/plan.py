"""The plan job: prepare the site, plan, turn an unmet requirement into an error, and answer with the plan,
its assessment, the baselines and the comparison with them."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from cohop.assess import SystemFigures
from cohop.errors import Conflict, PlanInfeasible
from cohop.jobs.answers import (AssessmentAnswer, PlannedSystem, assessment_answer, coordination_caution,
                                planned_systems, prepared)
from cohop.jobs.requests import PlanRequest
from cohop.jobs.sequence_answers import SequencesAnswer, sequences_answer
from cohop.deadline import Deadline
from cohop.planning.engine import NO_PLAN, BaselineResult, PlanResult, SolveSettings, plan_site
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
    caution = coordination_caution(prep.profile, coordination, result.sequences)
    sequences = None if result.sequences is None else sequences_answer(result.sequences, result.assessment)
    assessment = assessment_answer(result.assessment, caution, traffic=plan_traffic(result))
    return PlanAnswer(result=result, coordination=coordination, cautions=assessment.cautions,
                      plan=planned_systems(prep, result.hop_sets), sequences=sequences, assessment=assessment,
                      baselines=tuple(baseline_answer(b) for b in result.baselines),
                      comparison=compare(result.report.evaluated_objective, result.baselines))


def run_plan(req: PlanRequest, settings: SolveSettings, progress: Callable[[Progress], None] | None = None,
             deadline: Deadline | None = None) -> PlanAnswer:
    result = plan_site(prepared(req.site), req.requirements, settings, progress, req.detail, deadline=deadline)
    if result.report.status == NO_PLAN:
        raise PlanInfeasible([Conflict(v.requirement, v.systems, v.detail, relax="raise the time limit or relax "
                                       "this requirement") for v in result.violations], proven=False)
    return plan_answer(result)
