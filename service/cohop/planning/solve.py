"""Plan hop sets: heuristics for a start, CP-SAT to improve it, column generation to bound it.

The figures returned are always those of `cohop.assess` on the returned hop
sets; the solver's own objective is the linearised estimate (never below
the evaluated figure), reported beside them with the difference.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from typing import Callable

import numpy as np
from ortools.sat.python import cp_model

from cohop.assess import Assessment, assess_site
from cohop.config import default_of
from cohop.planning import baselines, bound, model, search
from cohop.planning.diagnose import diagnose
from cohop.planning.instance import PlanningInstance, build_instance
from cohop.planning.linear import hop_sets_of, marginal_costs, objective_value, system_estimates
from cohop.errors import PlanInfeasible
from cohop.planning.requirements import PlanRequirements, Progress
from cohop.planning.validate import Violation, validate_plan
from cohop.prepare import PreparedSite
from cohop.sequences.report import SequenceOutcome, plan_sequences

OPTIMAL, FEASIBLE, INFEASIBLE, NO_PLAN = "optimal", "feasible", "infeasible", "no plan found in time"
#: Relative gap under which a plan is called optimal: the integer scaling of costs in CP-SAT leaves a
#: rounding allowance of this order (see SolverReport.rounding).
OPTIMAL_GAP = 1e-4
#: CP-SAT deterministic time units per wall second on our 2-core machines (measured: about 0.5).
DETERMINISTIC_UNITS_PER_SECOND = 0.5


@dataclass(frozen=True)
class SolveSettings:
    """The solver's share of the COHOP_ settings (`cohop.config.Settings`), same names."""

    solver_threads: int = default_of("solver_threads")
    max_solve_s: float = default_of("max_solve_s")  # server cap on the request's time limit
    max_products: int = default_of("max_products")  # the full CP-SAT model is skipped above this many pair booleans
    deterministic: bool = default_of("deterministic")


@dataclass
class SolverReport:
    status: str
    objective: float  # linearised objective of the plan
    bound: float  # proven lower bound on it
    gap: float | None
    time_s: float
    time_limit_s: float
    method: str
    bounds: dict[str, float]
    evaluated_objective: float  # the request's objective on the evaluated figures (all systems)
    linearisation_error: float  # linearised estimate of that objective minus evaluated_objective (>= 0)
    scale_factor: float
    rounding: float
    workers: int
    deterministic: bool
    binding: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


@dataclass
class BaselineResult:
    name: str
    hop_sets: list[np.ndarray] | None
    assessment: Assessment | None
    violations: list[Violation]
    objective: float | None  # evaluated objective


@dataclass
class PlanResult:
    instance: PlanningInstance
    hop_sets: list[np.ndarray]
    assessment: Assessment
    report: SolverReport
    baselines: list[BaselineResult]
    violations: list[Violation]
    sequences: SequenceOutcome | None = None


def evaluated_objective(inst: PlanningInstance, assessment: Assessment) -> float:
    rates = np.array([f.collision_probability for f in assessment.systems])
    return float(rates.max()) if inst.req.objective == "worst_system" else float(inst.weights @ rates)


class _Clock:
    def __init__(self, limit_s: float, progress: Callable[[Progress], None] | None):
        self.start = time.monotonic()
        self.limit_s = limit_s
        self.progress = progress
        self.objective: float | None = None
        self.bound: float | None = None

    def elapsed(self) -> float:
        return time.monotonic() - self.start

    def tell(self, phase: str, objective=None, bound=None) -> None:
        if objective is not None:
            self.objective = objective if self.objective is None else min(self.objective, objective)
        if bound is not None:
            self.bound = bound if self.bound is None else max(self.bound, bound)
        if self.progress:
            self.progress(Progress(self.elapsed(), self.objective, self.bound, phase))


class _Callback(cp_model.CpSolverSolutionCallback):
    def __init__(self, clock: _Clock, scale: model.Scale, constant: float):
        super().__init__()
        self.clock, self.scale, self.constant = clock, scale, constant

    def on_solution_callback(self) -> None:
        self.clock.tell("cp-sat", objective=self.objective_value / self.scale.factor + self.constant)


def _cp_sat(inst: PlanningInstance, start: np.ndarray | None, budget_s: float, settings: SolveSettings,
            clock: _Clock):
    """Solve the full model (improving `start` if given); returns (x, proven bound, status name)."""
    m, mv, objective, scale = model.full_model(inst, start)
    worst = inst.req.objective == "worst_system"
    model.minimise(m, mv, inst, objective, scale)
    solver = cp_model.CpSolver()
    p = solver.parameters
    p.num_workers = settings.solver_threads
    p.random_seed = int(inst.req.seed) % (2**31)
    if settings.deterministic:
        p.interleave_search = settings.solver_threads > 1
        p.max_deterministic_time = budget_s * DETERMINISTIC_UNITS_PER_SECOND
        p.max_time_in_seconds = settings.max_solve_s  # safety only
    else:
        p.max_time_in_seconds = budget_s
    constant = 0.0 if worst else mv.constant
    allowance = _rounding_allowance(objective, scale)
    solver.best_bound_callback = lambda b: clock.tell("cp-sat", bound=max(0.0, b / scale.factor + constant - allowance))
    status = solver.solve(m, _Callback(clock, scale, constant))
    if status not in (cp_model.OPTIMAL, cp_model.FEASIBLE):
        return None, None, solver.status_name(status), scale
    x = model.solution(solver, mv, inst.allowed.shape)
    proven = solver.best_objective_bound / scale.factor + constant - allowance
    return x, max(proven, 0.0), solver.status_name(status), scale


def _rounding_allowance(objective: model.Objective, scale: model.Scale) -> float:
    """Largest amount by which integer rounding can overstate the scaled objective."""
    n = len(objective.costs.node) + len(objective.costs.pair)
    return 0.5 * n / scale.factor


def _binding(inst: PlanningInstance, x: np.ndarray, estimates: np.ndarray) -> list[str]:
    out = []
    m = marginal_costs(inst, x)
    for v, reasons in inst.exclusions.items():
        held = np.flatnonzero(x[v])
        dearest = m[v, held].max() if held.size else -math.inf
        for why, chan_runs in reasons:
            excluded = [c for lo, hi in chan_runs for c in range(lo, hi + 1) if inst.prep.usable[v, c]]
            if excluded and m[v, excluded].min() < dearest:
                out.append(f"{inst.ids[v]}: {why} (channels {chan_runs[0][0]}-{chan_runs[-1][1]})")
    for v in range(inst.n_systems):
        sid = inst.ids[v]
        if math.isfinite(inst.ceilings[v]) and estimates[v] >= 0.99 * inst.ceilings[v]:
            out.append(f"{sid}: loss ceiling")
        pins = np.flatnonzero(inst.pinned[v])
        free = np.flatnonzero(inst.allowed[v] & ~x[v])
        if pins.size and free.size and m[v, pins].max() > m[v, free].min():
            out.append(f"{sid}: pinned channels")
        held = np.flatnonzero(x[v])
        if inst.separation[v] > 1 and held.size > 1 and np.diff(held).min() == inst.separation[v]:
            out.append(f"{sid}: channel separation")
    for v, a, w in inst.guards:
        d = np.abs(np.flatnonzero(x[v])[:, None] - np.flatnonzero(x[a])[None, :])
        if d.size and d.min() == w + 1:
            out.append(f"{inst.ids[v]} / {inst.ids[a]}: guard")
    return out


def _evaluate(prep: PreparedSite, hop_sets, detail: str = "system", origin: str = "baseline") -> Assessment:
    return assess_site(prep, hop_sets=hop_sets, detail=detail, origin=origin)


def _baselines(inst: PlanningInstance) -> list[BaselineResult]:
    out = []
    for name in inst.req.baselines:
        sets = baselines.BASELINE_BUILDERS[name](inst)
        if sets is None:
            out.append(BaselineResult(name, None, None, [Violation("construction", (), "no plan built")], None))
            continue
        a = _evaluate(inst.prep, sets)
        out.append(BaselineResult(name, sets, a, validate_plan(inst, sets, a), evaluated_objective(inst, a)))
    return out


def _independent(inst: PlanningInstance) -> PlanningInstance:
    """Each system only avoids what it measures: no inter-system terms in the objective."""
    out = inst.with_sizes(inst.sizes)
    out.beta = np.zeros_like(inst.beta)
    out.guards = []
    return out


def _infeasible(inst: PlanningInstance):
    conflicts, proven = diagnose(inst)
    if conflicts is None:
        return None
    raise PlanInfeasible(conflicts, proven=proven)


def _meet_ceilings(inst: PlanningInstance, x: np.ndarray, seconds: float, stop) -> np.ndarray:
    """Raise the weight of systems above their ceiling and search again, a few rounds."""
    weights = inst.weights.astype(float).copy()
    for r in range(5):
        over = system_estimates(inst, x) > inst.ceilings
        if not over.any():
            break
        weights[over] *= 10.0
        x = search.iterated(inst, x, search.kick_budget(inst, seconds / 5), inst.req.seed + 101 + r, weights,
                            stop=stop)
    return x


def _proven(objective: float, bound_value: float) -> bool:
    return objective <= 0 or (objective - bound_value) / objective <= OPTIMAL_GAP


def _search(inst: PlanningInstance, settings: SolveSettings, limit: float, clock: _Clock, notes: list[str]):
    """The best plan found and the bounds proven on its objective.

    Budget (deterministic shares of the time limit): a quick co-channel bound on the greedy start (5 %;
    a proven start ends the search), iterated local search (45 %, or 70 % without CP-SAT), CP-SAT on the
    full model when it is small enough (25 %), and the column-generation bound (25 %).
    """
    stop = (lambda: clock.elapsed() > settings.max_solve_s)  # wall-clock safety cap only
    start = search.greedy(inst)
    if start is None:
        _infeasible(inst)  # raises when no plan exists; otherwise CP-SAT looks for one
    bounds: dict[str, float] = {}
    products = model.product_count(inst)
    use_cp_sat = products <= settings.max_products
    scale = model.Scale(1.0, 0.0)
    method = "greedy construction and iterated local search"
    x = None
    if start is not None:
        x = search.improve(inst, start) if inst.req.objective != "worst_system" else search.improve_worst(inst, start)
        quick = bound.lower_bound(inst, x, length=1, iterations=20, seconds=0.05 * limit)
        bounds["column_generation"] = quick.bound
        clock.tell("greedy start", objective=_value(inst, x), bound=quick.bound)
        if _proven(_value(inst, x), quick.bound) and not np.isfinite(inst.ceilings).any():
            notes.append("the greedy start was proven optimal by the co-channel bound")
            return x, bounds, "greedy construction and local search", scale
        share = 0.45 if use_cp_sat else 0.7
        x = search.search_plan(inst, x, share * limit, stop=stop,
                               progress=lambda k, v: clock.tell("local search", objective=v))
        if np.isfinite(inst.ceilings).any():
            x = _meet_ceilings(inst, x, 0.1 * limit, stop)
        clock.tell("local search", objective=_value(inst, x))
    if use_cp_sat or x is None:
        cx, cb, status, scale = _cp_sat(inst, x, 0.25 * limit if x is not None else limit, settings, clock)
        if cb is not None:
            bounds["cp_sat"] = cb
        if status == "INFEASIBLE":
            _infeasible(inst)
        if cx is not None and (x is None or _value(inst, cx) < _value(inst, x)):
            x = search.polish(inst, cx)
            method = "CP-SAT on the full model, from the local-search plan"
        else:
            method += ", then CP-SAT on the full model (no better plan)"
    else:
        notes.append(f"CP-SAT on the full model skipped: it would need {products} pair booleans (cap "
                     f"{settings.max_products})")
    if x is None:
        raise PlanInfeasible(diagnose(inst)[0] or [], proven=False)
    if not _proven(_value(inst, x), max(bounds.values())):
        cg = bound.lower_bound(inst, x, length=bound.window_length(inst), iterations=400, seconds=0.3 * limit,
                               deadline=stop)
        bounds["column_generation"] = max(cg.bound, bounds.get("column_generation", 0.0))
        clock.tell("column generation", bound=cg.bound)
        notes.append(f"column generation: windows of {cg.window} channel(s), {cg.iterations} iteration(s), "
                     f"{cg.columns} columns, {'converged' if cg.converged else 'stopped at its work budget'}")
    if clock.elapsed() > settings.max_solve_s:
        notes.append("the wall-clock safety cap stopped the search: this run may not repeat exactly")
    return x, bounds, method, scale


def _value(inst: PlanningInstance, x: np.ndarray) -> float:
    return objective_value(inst, system_estimates(inst, x))


def plan_site(prep: PreparedSite, req: PlanRequirements, settings: SolveSettings = SolveSettings(),
              progress: Callable[[Progress], None] | None = None, detail: str = "channel",
              with_sequences: bool = True) -> PlanResult:
    limit = min(req.time_limit_s, settings.max_solve_s)
    clock = _Clock(limit, progress)
    full = build_instance(prep, req)
    inst = _independent(full) if req.coordination == "independent" else full
    notes: list[str] = []
    x, bounds, method, scale = _search(inst, settings, limit, clock, notes)
    estimates = system_estimates(inst, x)
    objective = objective_value(inst, estimates)
    best_bound = min(max(bounds.values()), objective)
    gap = 0.0 if objective <= 0 else max(0.0, (objective - best_bound) / objective)
    hop_sets = hop_sets_of(x)
    sequences = plan_sequences(prep, hop_sets, req.seed, req.sequence_packets) if with_sequences else None
    assessment = assess_site(prep, hop_sets=hop_sets, detail=detail, origin="plan",
                             sequences=sequences.orders if sequences is not None else None)
    violations = validate_plan(full, hop_sets, assessment)
    status = NO_PLAN if violations else OPTIMAL if gap <= OPTIMAL_GAP else FEASIBLE
    evaluated = evaluated_objective(full, assessment)
    if req.coordination == "independent":
        notes.append("independent coordination: the solver's objective, bound and gap are each system's own "
                     "exposure to the fixed interferers; the evaluated objective counts every system")
    report = SolverReport(status=status, objective=objective, bound=best_bound, gap=gap, time_s=clock.elapsed(),
                          time_limit_s=limit, method=method, bounds=bounds, evaluated_objective=evaluated,
                          linearisation_error=objective_value(full, system_estimates(full, x)) - evaluated,
                          scale_factor=scale.factor,
                          rounding=scale.max_relative_rounding, workers=settings.solver_threads,
                          deterministic=settings.deterministic, binding=_binding(inst, x, estimates), notes=notes)
    return PlanResult(instance=inst, hop_sets=hop_sets, assessment=assessment, report=report,
                      baselines=_baselines(full), violations=violations, sequences=sequences)
