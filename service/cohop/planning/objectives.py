"""Objectives on the evaluated figures users read, reached by iterating the linear planner.

The planner (`cohop.planning.engine.plan_site`) minimises a linear function
of the per-hop collision c_v: the priority-weighted sum, or the worst
system. Users read other figures: the residual loss after retries, which
for system v is

    R_v(c) = L_v(c)^(k_v + 1),   L_v(c) = 1 - (1 - c)^n_v (1 - f_v)^n_v

(n_v hops per attempt, f_v the per-hop fade probability, k_v the retry
limit; `cohop.stats.retries`). R_v is steep where few retries and several
hops per attempt leave the loss high and almost flat elsewhere, so the plan
that is best on collision need not be best on residual loss.

"residual_loss" minimises sum_v p_v R_v(c_v) (p_v the priority weight). Each
round runs the linear planner with per-system weights p_v R_v'(c_v), the
sensitivity of that figure to the system's per-hop collision at the last
plan (a first-order model of the objective around it: the weights of a
Frank-Wolfe step); the first round uses the priority weights. The best plan
by the evaluated figure is kept. Rounds share the one time limit: the
search budget (what the closing phases leave) is split between them
(`ROUND_SHARES`, `cohop.deadline.Budget.split`; fewer rounds on a short limit,
`round_count`), and the sequences, the
assessment and the baselines run once, on the plan kept.

"worst_margin" minimises the largest share of a ceiling that a system's
evaluated loss takes: max over systems and their ceilings of
R_v / max_residual_loss_v and L_v / max_attempt_loss_v (below 1 every ceiling
is met, by a margin of 1 minus it; systems without a ceiling do not count,
and a request needs one). Its round weights are each system's slope of its
binding share times exp((s_v - s_max) / (TEMPERATURE s_max)), a smoothed
maximum, and move only halfway (DAMPING) from the last round's: a maximum is
not smooth, and undamped rounds oscillate between the systems.

The linear planner's objective, bound and gap in the answer are then those of
the round that found the kept plan (its weights are in the notes); no bound
on these figures is proven, so such a plan is never called optimal.

Every answer reports the value of each objective for its plan
(`ObjectiveValues`), each recomputable from the answer's per-system figures.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from cohop.assess import Assessment, assess_site
from cohop.deadline import Deadline
from cohop.errors import PlanInfeasible
from cohop.planning import baselines as baseline_builders, costs
from cohop.planning.engine import (FEASIBLE, NO_PLAN, BaselineResult, PlanResult, SolveSettings, plan_site,
                                   request_deadline, search_budget)
from cohop.planning.instance import build_instance, without_inter_system_terms
from cohop.planning.linear import occupancy, system_estimates
from cohop.planning.requirements import LINEAR_OBJECTIVES, PlanRequirements, Progress
from cohop.planning.validate import Violation, validate_plan
from cohop.prepare import PreparedSite
from cohop.sequences.report import plan_sequences, sequence_work
from cohop.stats import retries

#: Objectives the linear planner minimises directly.
LINEAR = LINEAR_OBJECTIVES
#: Objectives on the evaluated figures, reached by rounds of the linear planner.
ITERATED = ("residual_loss", "worst_margin")
#: Shares of the search budget per round (each sum 1), by the number of rounds: the first (priority weights)
#: gets the most, since the later rounds start from scratch on a nearby objective.
ROUND_SHARES = {1: (1.0,), 2: (0.6, 0.4), 3: (0.5, 0.25, 0.25), 4: (0.4, 0.2, 0.2, 0.2)}
#: A later round runs only if its share is at least this much calibrated work, and at least
#: MIN_ROUND_OVERHEADS times its own set-up and assessments (`round_overhead_s`): on a short limit fewer,
#: longer rounds, down to one (the weighted_sum plan with the whole budget, kept or not by the figure).
MIN_ROUND_WORK_S = 0.2
MIN_ROUND_OVERHEADS = 1.5
#: A system's round weight is at least this share of the largest, so that no system becomes free to
#: degrade without limit (its collision would then grow until its own residual loss mattered).
WEIGHT_FLOOR = 1e-2
#: worst_margin: the systems' shares of their ceilings are smoothed into weights exp((s_v - s_max) / (TEMPERATURE
#: s_max)), so that the systems near the worst one count and the others hardly.
TEMPERATURE = 0.1
#: worst_margin: each round's weights move this share of the way from the last round's to the new gradient's.
DAMPING = 0.5


@dataclass(frozen=True)
class ObjectiveValues:
    """Every objective's value for one plan, on the evaluated figures (`assessment.systems`):
    weighted_sum = sum_v p_v c_v, worst_system = max_v c_v, residual_loss = sum_v p_v R_v, with p_v the
    priority weight, c_v the per-hop collision and R_v the residual loss after retries."""

    weighted_sum: float
    worst_system: float
    worst_system_id: str
    residual_loss: float
    worst_margin: float | None = None  # the largest share of a ceiling; None when the request sets none
    worst_margin_system_id: str | None = None

    def of(self, kind: str) -> float:
        return getattr(self, kind)


def ceilings_of(prep: PreparedSite, req: PlanRequirements | None) -> tuple[np.ndarray, np.ndarray]:
    """Each system's ceilings on residual loss and on per-attempt loss (nan: none)."""
    residual = np.full(prep.n_systems, np.nan)
    attempt = np.full(prep.n_systems, np.nan)
    if req is not None:
        for v, s in enumerate(prep.site.systems):
            r = req.for_system(s.id)
            residual[v] = np.nan if r.max_residual_loss is None else r.max_residual_loss
            attempt[v] = np.nan if r.max_attempt_loss is None else r.max_attempt_loss
    return residual, attempt


def ceiling_shares(residual: np.ndarray, attempt: np.ndarray, ceilings) -> np.ndarray:
    """Per system, the larger of residual / its ceiling and attempt loss / its ceiling (nan without one).
    A ceiling of 0 has share 0 when the loss is 0, else 1 + the loss (missed, and finite for the answer)."""
    out = np.full(residual.shape, np.nan)
    for figure, ceiling in zip((residual, attempt), ceilings):
        with np.errstate(divide="ignore", invalid="ignore"):
            share = np.where(ceiling > 0, figure / ceiling, np.where(figure > 0, 1.0 + figure, 0.0))
        share = np.where(np.isnan(ceiling), np.nan, share)
        out = np.fmax(out, share)
    return out


def objective_values(assessment: Assessment, req: PlanRequirements | None = None) -> ObjectiveValues:
    """Every objective's value; worst_margin needs the request's ceilings (`req`)."""
    p = np.array([s.priority_weight for s in assessment.prepared.site.systems], dtype=float)
    c = np.array([f.collision_probability for f in assessment.systems])
    r = np.array([f.residual_loss_probability for f in assessment.systems])
    att = np.array([f.attempt_loss_probability for f in assessment.systems])
    worst = int(np.argmax(c))
    shares = ceiling_shares(r, att, ceilings_of(assessment.prepared, req))
    margin, margin_id = None, None
    if not np.isnan(shares).all():
        m = int(np.nanargmax(shares))
        margin, margin_id = float(shares[m]), assessment.systems[m].id
    return ObjectiveValues(weighted_sum=float(p @ c), worst_system=float(c[worst]),
                           worst_system_id=assessment.systems[worst].id, residual_loss=float(p @ r),
                           worst_margin=margin, worst_margin_system_id=margin_id)


# --- the retry model and its sensitivity to per-hop collision ---------------------------------------

def residual_of(collision, fade_probability, hops_per_attempt: int, retry_limit: int):
    """R(c): the residual loss after retries as `cohop.assess` computes it (`cohop.stats.retries`)."""
    attempt = retries.combine_independent(retries.per_attempt(collision, hops_per_attempt),
                                          retries.per_attempt(fade_probability, hops_per_attempt))
    return retries.residual_loss(attempt, retry_limit)


def residual_sensitivity(collision, fade_probability, hops_per_attempt: int, retry_limit: int):
    """dR/dc, by the chain rule on R = L^(k+1), L = 1 - (1 - c)^n (1 - f)^n [derived here from the
    formulas of `cohop.stats.retries`]: dR/dc = (k + 1) L^k n (1 - c)^(n-1) (1 - f)^n."""
    c = np.asarray(collision, dtype=float)
    n, k = hops_per_attempt, retry_limit
    keep = (1.0 - np.asarray(fade_probability, dtype=float)) ** n
    attempt = 1.0 - (1.0 - c) ** n * keep
    return (k + 1) * attempt**k * n * (1.0 - c) ** (n - 1) * keep


def attempt_loss_of(collision, fade_probability, hops_per_attempt: int):
    """L(c) = 1 - (1 - c)^n (1 - f)^n (`cohop.stats.retries`)."""
    return retries.combine_independent(retries.per_attempt(collision, hops_per_attempt),
                                       retries.per_attempt(fade_probability, hops_per_attempt))


def attempt_sensitivity(collision, fade_probability, hops_per_attempt: int):
    """dL/dc = n (1 - c)^(n-1) (1 - f)^n [chain rule on L above]."""
    c = np.asarray(collision, dtype=float)
    n = hops_per_attempt
    return n * (1.0 - c) ** (n - 1) * (1.0 - np.asarray(fade_probability, dtype=float)) ** n


def losses_at(prep: PreparedSite, collision: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Every system's residual loss and per-attempt loss at the given per-hop collisions."""
    systems = prep.site.systems
    resid = np.array([float(residual_of(collision[v], prep.fade_probability[v], s.hops_per_attempt, s.retry_limit))
                      for v, s in enumerate(systems)])
    att = np.array([float(attempt_loss_of(collision[v], prep.fade_probability[v], s.hops_per_attempt))
                    for v, s in enumerate(systems)])
    return resid, att


def margin_gradient(prep: PreparedSite, req: PlanRequirements, collision: np.ndarray) -> np.ndarray:
    """Weights for worst_margin at per-hop collisions `collision`: per system the sensitivity of its share of
    its binding ceiling (the larger share) to its collision, times exp((s_v - s_max) / (TEMPERATURE s_max))
    (a smoothed maximum); zero for systems without a ceiling."""
    ceil_r, ceil_a = ceilings_of(prep, req)
    s_sys = prep.site.systems
    resid, att = losses_at(prep, collision)
    shares = ceiling_shares(resid, att, (ceil_r, ceil_a))
    out = np.zeros(prep.n_systems)
    finite = np.isfinite(shares)
    if not finite.any():
        return out
    top = float(shares[finite].max())
    for v, s in enumerate(s_sys):
        if not finite[v]:
            continue
        r_share = resid[v] / ceil_r[v] if ceil_r[v] > 0 else -np.inf  # nan and zero ceilings: no slope
        a_share = att[v] / ceil_a[v] if ceil_a[v] > 0 else -np.inf
        if r_share == a_share == -np.inf:
            continue
        if r_share >= a_share:
            slope = float(residual_sensitivity(collision[v], prep.fade_probability[v], s.hops_per_attempt,
                                               s.retry_limit)) / ceil_r[v]
        else:
            slope = float(attempt_sensitivity(collision[v], prep.fade_probability[v], s.hops_per_attempt)) / ceil_a[v]
        soft = math.exp((shares[v] - top) / (TEMPERATURE * top)) if top > 0 else 1.0
        out[v] = slope * soft
    return out


def residual_gradient(prep: PreparedSite, collision: np.ndarray) -> np.ndarray:
    """d(sum_v p_v R_v)/dc_v for every system at per-hop collisions `collision`."""
    out = np.zeros(prep.n_systems)
    for v, s in enumerate(prep.site.systems):
        out[v] = s.priority_weight * float(residual_sensitivity(collision[v], prep.fade_probability[v],
                                                                s.hops_per_attempt, s.retry_limit))
    return out


def value_at(prep: PreparedSite, req: PlanRequirements, collision: np.ndarray) -> float:
    """The request's iterated objective at the given per-hop collisions (e.g. the linearised estimates)."""
    if req.objective == "residual_loss":
        return residual_estimate(prep, collision)
    resid, att = losses_at(prep, collision)
    return float(np.nanmax(ceiling_shares(resid, att, ceilings_of(prep, req))))


def residual_estimate(prep: PreparedSite, collision: np.ndarray) -> float:
    """sum_v p_v R_v(c_v) at the given per-hop collisions (e.g. the planner's linearised estimates)."""
    return float(sum(s.priority_weight * float(residual_of(collision[v], prep.fade_probability[v],
                                                           s.hops_per_attempt, s.retry_limit))
                     for v, s in enumerate(prep.site.systems)))


def round_weights(gradient: np.ndarray) -> np.ndarray:
    """The linear planner's per-system weights for the next round: the gradient, floored at WEIGHT_FLOOR of
    its largest entry and scaled so that the largest is 1 (the scale changes no plan)."""
    top = float(gradient.max())
    if not math.isfinite(top) or top <= 0:
        return np.ones_like(gradient)
    return np.maximum(gradient / top, WEIGHT_FLOOR)


def with_weights(prep: PreparedSite, weights) -> PreparedSite:
    """The prepared site with these priority weights (the linear planner reads its weights from them)."""
    systems = tuple(dataclasses.replace(s, priority_weight=float(w)) for s, w in zip(prep.site.systems, weights))
    return dataclasses.replace(prep, site=dataclasses.replace(prep.site, systems=systems))


# --- planning ------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Round:
    """One round of the linear planner: its weights and the evaluated objective of its plan."""

    weights: tuple[float, ...]
    value: float
    linear_objective: float


def plan_for_objective(prep: PreparedSite, req: PlanRequirements, settings: SolveSettings = SolveSettings(),
                       progress: Callable[[Progress], None] | None = None, detail: str = "channel",
                       deadline: Deadline | None = None) -> PlanResult:
    """The plan for the request's objective (`objective_values(result.assessment)` gives every objective's
    value for it)."""
    if req.objective in LINEAR:
        return plan_site(prep, req, settings, progress, detail, deadline=deadline)
    return _iterated(prep, req, settings, progress, detail, deadline)


def round_count(work_s: float, overhead_s: float) -> int:
    """The most rounds (at most max(ROUND_SHARES)) whose later rounds each get their minimum, when the search
    has about `work_s` seconds before the later rounds' set-up (`overhead_s` each) is reserved."""
    least = max(MIN_ROUND_WORK_S, MIN_ROUND_OVERHEADS * overhead_s)
    for k in sorted(ROUND_SHARES, reverse=True):
        later = min(ROUND_SHARES[k][1:], default=1.0)
        if k == 1 or later * (work_s - (k - 1) * overhead_s) >= least:
            return k
    return 1


def round_overhead_s(inst) -> float:
    """What a round costs besides its search work (calibrated seconds): the planner's set-up and greedy start
    (`costs.before_search_s`), and two assessments with validation (the round's own and the evaluation here).
    The rounds after the first are reserved like the closing phases."""
    return costs.before_search_s(inst) + costs.SAFETY * 2 * costs.assessment_s(inst.n_systems, int(inst.sizes.sum()), costs.joint_cells(inst))


def _round_progress(progress, r: int):
    if progress is None:
        return None
    return lambda p: progress(Progress(p.elapsed_s, p.objective if r == 0 else None,
                                       p.bound if r == 0 else None, f"round {r + 1}: {p.phase}"))


def _iterated(prep, req, settings, progress, detail, deadline):
    deadline = deadline or request_deadline(req, settings)
    full = build_instance(prep, req)
    inst = without_inter_system_terms(full) if req.coordination == "independent" else full
    seq_work = sequence_work(prep, full.sizes, req.sequence_packets, costs.SEQUENCE_SHARE * deadline.limit_s)
    closing_s = costs.after_search_s(full, detail, seq_work)
    overhead = round_overhead_s(inst)
    # independent coordination decouples the systems: the weights change nothing, one round suffices
    rounds_wanted = 1 if req.coordination == "independent" else \
        round_count(deadline.limit_s - closing_s - costs.before_search_s(inst), overhead)
    shares = ROUND_SHARES[rounds_wanted]
    budget = search_budget(deadline, inst, closing_s + (rounds_wanted - 1) * overhead, settings.max_products)
    round_req = dataclasses.replace(req, objective="weighted_sum", baselines=())
    priority = np.array([s.priority_weight for s in prep.site.systems], dtype=float)
    weights = priority
    best, best_value, best_round, rounds = None, math.inf, -1, []
    for r, part in enumerate(budget.split(list(shares))):
        if r > 0 and part.left() <= 0:
            break
        # each round its own seed (derived from the request's), so that a round whose weights repeat an
        # earlier round's still searches afresh
        try:
            result = plan_site(with_weights(prep, weights), dataclasses.replace(round_req, seed=req.seed + r),
                               settings, _round_progress(progress, r), detail="system", with_sequences=False,
                               budget=part)
        except PlanInfeasible:
            if best is None:
                raise  # the first round's answer: no plan exists, or none was found (the diagnosis says which)
            break  # a later round found no plan in its share: keep the best so far
        deadline.count("objective_rounds", 1)
        evaluated = assess_site(prep, hop_sets=result.hop_sets, detail="system", origin="plan")
        value = objective_values(evaluated, req).of(req.objective)
        rounds.append(Round(tuple(float(w) for w in weights), value, result.report.objective))
        if value < best_value and not result.violations:
            best, best_value, best_round = result, value, r
        elif best is None:
            best, best_round = result, r
        collision = np.array([f.collision_probability for f in evaluated.systems])
        if req.objective == "residual_loss":
            weights = round_weights(residual_gradient(prep, collision))
        else:  # a maximum is not smooth: the weights move halfway towards the new gradient's (damped)
            new = round_weights(margin_gradient(prep, req, collision))
            weights = new if r == 0 else round_weights(DAMPING * new + (1 - DAMPING) * weights)
    return _finish(prep, req, full, inst, best, best_round, rounds, deadline, detail, seq_work, settings)


def _evaluated_baselines(full, req: PlanRequirements) -> list[BaselineResult]:
    """The practitioners' plans the request asked for, each with the request's objective evaluated."""
    out = []
    for name in req.baselines:
        sets = baseline_builders.BASELINE_BUILDERS[name](full)
        if sets is None:
            out.append(BaselineResult(name, None, None, [Violation("construction", (), "no plan built")], None))
            continue
        a = assess_site(full.prep, hop_sets=sets, detail="system", origin="baseline")
        value = objective_values(a, req).of(req.objective)
        out.append(BaselineResult(name, sets, a, validate_plan(full, sets, a), value))
    return out


def _finish(prep, req, full, inst, best: PlanResult, best_round: int, rounds: list[Round], deadline: Deadline,
            detail: str, seq_work, settings) -> PlanResult:
    """Sequences, the assessment, validation and baselines of the plan kept, and its report."""
    hop_sets = best.hop_sets
    closing = deadline.budget(deadline.limit_s, deadline.end)
    sequences = plan_sequences(prep, hop_sets, req.seed, req.sequence_packets, seq_work, closing)
    assessment = assess_site(prep, hop_sets=hop_sets, detail=detail, origin="plan", sequences=sequences.orders)
    violations = validate_plan(full, hop_sets, assessment)
    evaluated = objective_values(assessment, req).of(req.objective)
    x = occupancy(hop_sets, full.n_systems, full.n_channels)
    estimate = value_at(prep, req, system_estimates(full, x))
    kept = rounds[best_round]
    notes = [f"objective {req.objective}: {len(rounds)} round(s) of the linear planner with per-system weights "
             "from the sensitivity of that figure to per-hop collision; the plan kept is round "
             f"{best_round + 1}'s (weights " + ", ".join(f"{w:.3g}" for w in kept.weights) + "). The solver's "
             "objective, bound and gap are that round's weighted per-hop collision; no bound on "
             f"{req.objective} is proven",
             f"evaluated {req.objective} by round: " + ", ".join(f"{rd.value:.6g}" for rd in rounds)]
    notes += [n for n in best.report.notes if not n.startswith("the wall clock") and not n.startswith("the time")]
    notes += deadline.notes()
    report = dataclasses.replace(
        best.report, status=NO_PLAN if violations else FEASIBLE, time_s=deadline.elapsed(),
        time_limit_s=deadline.limit_s, requested_time_limit_s=deadline.requested_s, evaluated_objective=evaluated,
        linearisation_error=max(0.0, estimate - evaluated), objective_kind=req.objective,
        stopped_by_wall_clock=deadline.stopped_by_wall_clock, work=dict(deadline.work_done),
        method=best.report.method + f", {len(rounds)} sensitivity-weighted round(s)", notes=notes)
    return PlanResult(instance=inst, hop_sets=hop_sets, assessment=assessment, report=report,
                      baselines=_evaluated_baselines(full, req), violations=violations, sequences=sequences)
