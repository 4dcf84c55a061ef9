"""Plan hop sets: heuristics for a start, CP-SAT to improve it, column generation to bound it.

The figures returned are always those of `cohop.assess` on the returned hop
sets; the solver's own objective is the linearised estimate (never below
the evaluated figure), reported beside them with the difference.

Time: one `Deadline` per request. The phases after the search (sequences,
assessment, baselines, validation, the answer itself) get a reserve from
their calibrated cost (`cohop.planning.costs`); the search gets the rest as
deterministic work shares (`SHARES`) and stops at the wall clock only when
a busy machine makes it overrun (the answer then says so).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from cohop.assess import Assessment, assess_site
from cohop.config import default_of
from cohop.errors import PlanInfeasible
from cohop import cpsat
from cohop.planning import baselines, bound, calibration, costs, formulation, lagrange, model, search
from cohop.deadline import Budget, Deadline
from cohop.planning.diagnose import diagnose
from cohop.planning.instance import PlanningInstance, build_instance, without_inter_system_terms
from cohop.planning.linear import hop_sets_of, marginal_costs, objective_value, system_estimates
from cohop.planning.requirements import PlanRequirements, Progress
from cohop.planning.validate import Violation, validate_plan
from cohop.prepare import PreparedSite
from cohop.sequences.report import SequenceOutcome, plan_sequences, sequence_work

OPTIMAL, FEASIBLE, INFEASIBLE, NO_PLAN = "optimal", "feasible", "infeasible", "no plan found in time"
#: Relative gap under which a plan is called optimal: the integer scaling of costs in CP-SAT leaves a
#: rounding allowance of this order (see SolverReport.rounding).
OPTIMAL_GAP = 1e-4
#: Shares of the search's work budget; each set sums to 1. Loss ceilings take CEILING_SHARE out of the
#: local search's share, and the infeasibility diagnosis (when there is no start) DIAGNOSIS_SHARE. The
#: Lagrangian bound (`planning.lagrange`) is warm-started from the column generation's duals (the stronger of
#: the quick and the windowed one); its DP plans, repaired, start the last local search ("bound_plans").
#: The order of the keys is the order of the phases (`_Windows`).
SHARES = {"quick_bound": 0.05, "local_search": 0.25, "cp_sat": 0.25, "column_generation": 0.15, "lagrange": 0.20,
          "bound_plans": 0.10}
SHARES_WITHOUT_CP_SAT = {"quick_bound": 0.05, "local_search": 0.40, "column_generation": 0.20, "lagrange": 0.25,
                         "bound_plans": 0.10}
CEILING_SHARE = 0.10
MIN_CP_SAT_WORK_S = 0.1  # CP-SAT runs only if its share leaves this much work after building the model
DIAGNOSIS_SHARE = 0.5
MIN_DIAGNOSIS_WORK_S = 1.0  # calibrated seconds: small diagnoses are proven well within it
#: The search always gets at least this share of the limit, and at least MIN_SEARCH_S, however costly the
#: closing phases (a short limit then ends a little late: the target is max(1.1 T, T + 1 s)).
MIN_SEARCH_SHARE = 0.2
MIN_SEARCH_S = 0.25
#: Work budgets are this share of the search's wall-clock window, so that on a quiet machine the work
#: ends before the wall clock has to stop it (calibration is never exact).
WORK_MARGIN = 0.85


@dataclass(frozen=True)
class SolveSettings:
    """The solver's share of the COHOP_ settings (`cohop.config.Settings`), same names."""

    solver_threads: int = default_of("solver_threads")
    max_solve_s: float = default_of("max_solve_s")  # server cap on the request's time limit
    max_products: int = default_of("max_products")  # the full CP-SAT model is skipped above this many pair booleans
    deterministic: bool = default_of("deterministic")
    work_speed: float = default_of("work_speed")  # 0: measured once per process (`cohop.planning.calibration`)


@dataclass
class SolverReport:
    status: str
    objective: float  # linearised objective of the plan
    bound: float  # proven lower bound on it
    gap: float | None
    time_s: float  # since the request arrived
    time_limit_s: float  # the effective limit
    method: str
    bounds: dict[str, float]
    evaluated_objective: float  # the request's objective on the evaluated figures (all systems)
    linearisation_error: float  # linearised estimate of that objective minus evaluated_objective (>= 0)
    scale_factor: float
    rounding: float
    workers: int
    deterministic: bool
    objective_kind: str  # the request's objective (`requirements.OBJECTIVES`)
    requested_time_limit_s: float = 0.0  # the request's limit (above time_limit_s when the server's cap clamped it)
    stopped_by_wall_clock: bool = False  # a phase was cut short by the wall clock: the plan may not repeat
    work: dict[str, float] = field(default_factory=dict)  # work done: kicks, CP-SAT deterministic time, pricing
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
    """Progress reports: the best objective and bound so far, with the time since the request arrived."""

    def __init__(self, deadline: Deadline, progress: Callable[[Progress], None] | None):
        self.deadline = deadline
        self.progress = progress
        self.objective: float | None = None
        self.bound: float | None = None

    def elapsed(self) -> float:
        return self.deadline.elapsed()

    def tell(self, phase: str, objective=None, bound=None) -> None:
        if objective is not None:
            self.objective = objective if self.objective is None else min(self.objective, objective)
        if bound is not None:
            self.bound = bound if self.bound is None else max(self.bound, bound)
        if self.progress:
            self.progress(Progress(self.elapsed(), self.objective, self.bound, phase))


def _cp_sat(inst: PlanningInstance, start: np.ndarray | None, budget: Budget, work_s: float,
            settings: SolveSettings, clock: _Clock, proven_bound: float | None, gap: float = OPTIMAL_GAP):
    """Solve the full model (improving `start` if given); returns (x, proven bound, status name, scale).

    It stops at a relative gap of max(OPTIMAL_GAP / 2, `gap`) (CP-SAT's own), or as soon as a solution is within
    that of `proven_bound` (a bound another method proved)."""
    cp = formulation.PairBooleanCpSat(inst, settings.solver_threads, inst.req.seed, settings.deterministic)
    cp.hint(start)
    out = cp.solve(formulation.SolveLimits(budget, work_s, max(0.5 * OPTIMAL_GAP, gap), proven_bound,
                                           on_solution=lambda v: clock.tell("cp-sat", objective=v),
                                           on_bound=lambda b: clock.tell("cp-sat", bound=b)))
    return out.x, out.bound, out.status, out.scale


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
        ceiling = inst.ceilings[v]
        if math.isfinite(ceiling) and ceiling < 0:
            out.append(f"{sid}: loss ceiling NOT met (fading alone exceeds it)")
        elif math.isfinite(ceiling) and estimates[v] > ceiling * (1 + 1e-9):
            out.append(f"{sid}: loss ceiling NOT met (per-hop collision estimate {estimates[v]:.3g} above the "
                       f"{ceiling:.3g} it allows)")
        elif math.isfinite(ceiling) and estimates[v] >= 0.99 * ceiling:
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


def _baselines(inst: PlanningInstance, greedy_start: np.ndarray | None = None) -> list[BaselineResult]:
    """The practitioners' plans the request asked for; `greedy_start` is the planner's own greedy start on
    this instance, reused for the greedy baseline (the same construction)."""
    out = []
    for name in inst.req.baselines:
        if name == "greedy" and greedy_start is not None:
            sets = [np.flatnonzero(row) for row in greedy_start]
        else:
            sets = baselines.BASELINE_BUILDERS[name](inst)
        if sets is None:
            out.append(BaselineResult(name, None, None, [Violation("construction", (), "no plan built")], None))
            continue
        a = _evaluate(inst.prep, sets)
        out.append(BaselineResult(name, sets, a, validate_plan(inst, sets, a), evaluated_objective(inst, a)))
    return out


def _diagnose(inst: PlanningInstance, budget: Budget, settings: SolveSettings):
    work = max(MIN_DIAGNOSIS_WORK_S, budget.work(DIAGNOSIS_SHARE))
    return diagnose(inst, budget, work_s=work, seed=inst.req.seed, deterministic=settings.deterministic)


def _infeasible(inst: PlanningInstance, budget: Budget, settings: SolveSettings):
    conflicts, proven = _diagnose(inst, budget, settings)
    if conflicts is None:
        return None
    raise PlanInfeasible(conflicts, proven=proven)


def _meet_ceilings(inst: PlanningInstance, x: np.ndarray, seconds: float, stop, deadline: Deadline) -> np.ndarray:
    """Raise the weight of systems above their ceiling and search again, a few rounds."""
    weights = inst.weights.astype(float).copy()
    for r in range(5):
        over = system_estimates(inst, x) > inst.ceilings
        if not over.any():
            break
        weights[over] *= 10.0
        x = search.iterated(inst, x, search.kick_budget(inst, seconds / 5), inst.req.seed + 101 + r, weights,
                            stop=stop, counter=deadline)
    return x


def _proven(objective: float, bound_value: float, gap: float = OPTIMAL_GAP) -> bool:
    """The plan is proven within `gap` (relative) of the best possible."""
    return objective <= 0 or (objective - bound_value) / objective <= max(gap, OPTIMAL_GAP)


def _quick_bound(inst: PlanningInstance, x: np.ndarray, budget: Budget,
                 stop: Callable[[], bool] | None = None) -> bound.BoundResult:
    """The co-channel (one-channel window) bound: cheap, and it proves many sites at once. Its LP duals warm-start
    the Lagrangian bound. `stop`: its wall-clock window (one exact pricing can take seconds on 40 systems)."""
    work = budget.work(SHARES["quick_bound"])
    result = bound.lower_bound(inst, x, length=1, iterations=20, seconds=work,
                               deadline=stop or budget.stopper("quick bound"))
    budget.deadline.count("pricing_operations", result.work)
    return result


#: Above this many systems the channel DP's states (sets of systems per channel) are out of reach in a request's
#: time (the large bench site, 50 systems: millions of transition pairs per channel): its shares go to the local
#: search and the column generation bounds alone.
LAGRANGE_MAX_SYSTEMS = 24
#: The Lagrangian bound runs only if its share is at least this much calibrated work: one DP solve cannot be
#: interrupted and costs 0.2 to 1 s on the medium bench site (busy machine), so a short limit would overrun.
MIN_LAGRANGE_WORK_S = 0.5


def speed_notes(deadline: Deadline, speed: float | None = None) -> list[str]:
    """The answer says when the work budgets were scaled to this machine's measured speed (`speed`: the figure
    the search used, `search_speed`; the deadline's by default)."""
    speed = deadline.work_speed if speed is None else speed
    if speed == 1.0:
        return []
    which = " without CP-SAT" if speed != deadline.work_speed else ""
    return [f"work budgets at {speed:g} x the calibration: this machine's speed{which} "
            "(`cohop.planning.calibration`)"]


def taken_back_notes(inst: PlanningInstance) -> list[str]:
    """One note per system that hops over interfered channels because the rest could not hold its count."""
    out = []
    for v, chan_runs in sorted(inst.taken_back.items()):
        shown = ", ".join(str(a) if a == b else f"{a}-{b}" for a, b in chan_runs)
        out.append(f"{inst.ids[v]}: channels {shown} are hit by fixed interferers more than "
                   f"{inst.req.interferer_threshold:g} of the time but were taken back (the least hit) so that it "
                   f"keeps its {int(inst.min_size[v])} channels")
    return out


def _without_dp(shares: dict, inst: PlanningInstance, notes: list[str]) -> dict:
    """The shares when the DP is out of reach (too many systems): the Lagrangian bound's and its plans' go to
    the local search (the restricted DP's plan, `_search_from_columns`, was tried there and lost: large bench
    site 1.5370 against 1.5353 with that share in the main local search)."""
    if inst.n_systems <= LAGRANGE_MAX_SYSTEMS:
        return shares
    out = dict(shares)
    out["local_search"] += out["lagrange"] + out["bound_plans"]
    out["lagrange"] = out["bound_plans"] = 0.0
    notes.append(f"Lagrangian bound skipped: {inst.n_systems} systems (the channel DP takes at most "
                 f"{LAGRANGE_MAX_SYSTEMS} in a request's time)")
    return out


class _Windows:
    """Wall-clock windows per phase: a phase that runs slower than calibrated (a busy machine) stops where the
    cumulative shares up to and including it end, counted from the search's start, so it cannot eat the time of
    the phases after it (the bound among them). The search's own end still stops every phase."""

    def __init__(self, budget: Budget):
        self.budget = budget
        self.start = time.monotonic()
        self.window = budget.left()

    def _end(self, shares: dict, name: str) -> float:
        names = list(shares)
        return self.start + sum(shares[k] for k in names[:names.index(name) + 1]) * self.window

    def seconds_left(self, shares: dict, name: str) -> Callable[[], float]:
        """Wall-clock seconds left in the phase's window (and the search's): what an uninterruptible step
        may still take."""
        end = self._end(shares, name)
        return lambda: max(0.0, min(end - time.monotonic(), self.budget.left()))

    def stopper(self, phase: str, shares: dict, name: str) -> Callable[[], bool]:
        end = self._end(shares, name)

        def stop() -> bool:
            if time.monotonic() >= end:
                self.budget.deadline.record_stop(phase)
                return True
            return self.budget.expired(phase)

        return stop


class _Renamed:
    """Counts work under another name (the local search from the bound's plans: `kicks_from_bound`)."""

    def __init__(self, deadline: Deadline, kind: str):
        self.deadline, self.kind = deadline, kind

    def count(self, kind: str, amount: float) -> None:
        self.deadline.count(self.kind, amount)


def _lagrange_phase(inst: PlanningInstance, x: np.ndarray, quick: bound.BoundResult | None, budget: Budget,
                    shares: dict, clock: _Clock, notes: list[str], gap: float, stop: Callable[[], bool],
                    seconds_left: Callable[[], float] | None = None, spare_work: float = 0.0):
    """The Lagrangian bound from the column generation's duals (`warm`), then local search from its DP plans
    (repaired to the counts). Returns (bound or None, the best plan, whether a plan from the bound won).

    Work: the two phases' shares and `spare_work` (what the column generation left) together; the DP solves
    take what they need of it (one solve on a mid-size site costs most of it: medium's first solve is about
    2.3 billion operations) and the local search from the DP's plans the rest."""
    deadline = budget.deadline
    total = budget.work(shares["lagrange"] + shares["bound_plans"]) + spare_work
    value = _value(inst, x)
    relaxation = formulation.LagrangianBound(inst, quick.multipliers if quick is not None else None,
                                             quick.victim_weights if quick is not None else None,
                                             theta=lagrange.THETA_NEAR if quick is not None and quick.window > 1
                                             else lagrange.THETA0)
    relaxation.hint(x)
    out = relaxation.solve(formulation.SolveLimits(budget, total, max(gap, OPTIMAL_GAP),
                                                   on_bound=lambda b: clock.tell("lagrangian bound", bound=b),
                                                   stop=stop, seconds_left=seconds_left))
    deadline.count("dp_operations", out.work)
    notes.extend(out.notes)
    if out.bound is None or out.x is None or _proven(value, out.bound, gap):
        return out.bound, x, False
    seconds = max(0.0, total - out.work / lagrange.WORK_PER_SECOND)
    y = search.iterated(inst, out.x, search.kick_budget(inst, seconds), inst.req.seed + 7, stop=budget.stopper(
        "local search from the bound's plans"), counter=_Renamed(deadline, "kicks_from_bound"),
        target=out.bound / (1 - max(gap, OPTIMAL_GAP)))
    if _value(inst, y) < value:
        clock.tell("local search from the bound's plans", objective=_value(inst, y))
        return out.bound, y, True
    return out.bound, x, False


def _search(inst: PlanningInstance, settings: SolveSettings, budget: Budget, clock: _Clock, notes: list[str]):
    """The best plan found, the bounds proven on its objective, the method, the scale, and the greedy start.

    Budget: deterministic shares of the search budget (`SHARES`, summing to 1), every phase stopped by the
    wall clock at the budget's end; a phase is skipped once the plan is proven optimal.
    """
    deadline = budget.deadline
    gap = inst.req.target_gap
    quick = None
    windows = _Windows(budget)
    start = search.greedy(inst)
    if start is None:
        _infeasible(inst, budget, settings)  # raises when no plan exists; otherwise CP-SAT looks for one
    bounds: dict[str, float] = {}
    products = model.product_count(inst)
    build_s = cpsat.BUILD_S_PER_PRODUCT * products
    small_enough = products <= settings.max_products
    use_cp_sat = small_enough and budget.work(SHARES["cp_sat"]) >= build_s + MIN_CP_SAT_WORK_S
    shares = _without_dp(SHARES if use_cp_sat else SHARES_WITHOUT_CP_SAT, inst, notes)
    ceilings = bool(np.isfinite(inst.ceilings).any())
    scale = model.Scale(1.0, 0.0)
    method = "greedy construction and iterated local search"
    x = None
    if start is not None:
        x = search.improve(inst, start) if inst.req.objective != "worst_system" else search.improve_worst(inst, start)
        quick = _quick_bound(inst, x, budget, windows.stopper("quick bound", shares, "quick_bound"))
        bounds["column_generation"] = quick.bound
        clock.tell("greedy start", objective=_value(inst, x), bound=bounds["column_generation"])
        if _proven(_value(inst, x), bounds["column_generation"], gap) and not ceilings:
            notes.append("the greedy start was proven " + _within(gap) + " by the co-channel bound")
            return x, bounds, "greedy construction and local search", scale, start
        local = budget.work(shares["local_search"] - (CEILING_SHARE if ceilings else 0.0))
        proven_at = None if ceilings else max(bounds.values()) / (1 - max(gap, OPTIMAL_GAP)) if bounds else None
        kicks_before, started = deadline.work_done.get("kicks", 0), time.monotonic()
        x = search.search_plan(inst, x, local, stop=windows.stopper("local search", shares, "local_search"),
                               counter=deadline,
                               progress=lambda k, v: clock.tell("local search", objective=v), target=proven_at)
        kicks = deadline.work_done.get("kicks", 0) - kicks_before
        budget.observe(local * kicks / max(1, search.kick_budget(inst, local)), time.monotonic() - started)
        if ceilings:
            x = _meet_ceilings(inst, x, budget.work(CEILING_SHARE), budget.stopper("local search"), deadline)
        clock.tell("local search", objective=_value(inst, x))
        if _proven(_value(inst, x), max(bounds.values()), gap) and not ceilings:
            notes.append("the local-search plan was proven " + _within(gap) + " by the co-channel bound")
            return x, bounds, method, scale, start
    if use_cp_sat or x is None:
        work = max(MIN_CP_SAT_WORK_S, budget.work(shares.get("cp_sat", 0.0) if x is not None else 1.0) - build_s)
        known = max(bounds.values()) if bounds else None
        # without a start there is no plan at all yet: CP-SAT may then run up to the limit itself
        cp_budget = budget if x is not None else deadline.budget(budget.seconds, deadline.end)
        cx, cb, status, scale = _cp_sat(inst, x, cp_budget, work, settings, clock, known, gap)
        if cb is not None:
            bounds["cp_sat"] = cb
        if status == "INFEASIBLE":
            _infeasible(inst, budget, settings)
        if cx is not None and (x is None or _value(inst, cx) < _value(inst, x)):
            x = search.polish(inst, cx)
            method = "CP-SAT on the full model, from the local-search plan"
        else:
            method += ", then CP-SAT on the full model (no better plan)"
    elif not small_enough:
        notes.append(f"CP-SAT on the full model skipped: it would need {products} pair booleans (cap "
                     f"{settings.max_products})")
    else:
        notes.append(f"CP-SAT on the full model skipped: building its {products} pair booleans would take most "
                     "of its share of this time limit")
    if x is None:
        raise PlanInfeasible(_diagnose(inst, budget, settings)[0] or [], proven=False)
    warm, cg = quick, None
    if x is not None and not _proven(_value(inst, x), max(bounds.values()) if bounds else 0.0, gap):
        cg = bound.lower_bound(inst, x, length=bound.window_length(inst), iterations=400,
                               seconds=budget.work(shares["column_generation"]),
                               deadline=windows.stopper("column generation", shares, "column_generation"))
        deadline.count("pricing_operations", cg.work)
        bounds["column_generation"] = max(cg.bound, bounds.get("column_generation", 0.0))
        clock.tell("column generation", bound=cg.bound)
        notes.append(f"column generation: windows of {cg.window} channel(s), {cg.iterations} iteration(s), "
                     f"{cg.columns} columns, {'converged' if cg.converged else 'stopped at its work budget'}")
        if cg.multipliers is not None and (quick is None or cg.bound >= quick.bound):
            warm = cg
    # the work the column generation left when it converged early goes to the Lagrangian bound (a count: repeatable)
    spare = 0.0 if cg is None else max(0.0, budget.work(shares["column_generation"]) - cg.work / bound.WORK_PER_SECOND)
    short = budget.work(shares["lagrange"] + shares["bound_plans"]) + spare < MIN_LAGRANGE_WORK_S
    if shares["lagrange"] > 0 and short and not _proven(_value(inst, x), max(bounds.values()) if bounds else 0.0, gap):
        notes.append("Lagrangian bound skipped: its share of this time limit is below one uninterruptible DP solve")
    elif shares["lagrange"] > 0 and not _proven(_value(inst, x), max(bounds.values()) if bounds else 0.0, gap):
        lb, x, won = _lagrange_phase(inst, x, warm, budget, shares, clock, notes, gap,
                                     windows.stopper("lagrangian bound", shares, "bound_plans"),
                                     windows.seconds_left(shares, "bound_plans"), spare)
        if lb is not None:
            bounds["lagrangian"] = lb
        if won:
            method += ", then local search from the Lagrangian bound's plans"
    if cg is not None and shares["lagrange"] > 0 and "lagrangian" not in bounds \
            and not _proven(_value(inst, x), max(bounds.values()), gap):
        x, more = _without_lagrangian(inst, x, cg, budget, shares, windows, clock, notes, gap, spare)
        bounds["column_generation"] = max(bounds["column_generation"], more)
    return x, bounds, method, scale, start


#: At most this share of the continued local search's work goes to the restricted DP that gives its start.
RESTRICTED_DP_SHARE = 0.5


def _without_lagrangian(inst: PlanningInstance, x: np.ndarray, cg: bound.BoundResult, budget: Budget, shares: dict,
                        windows: "_Windows", clock: _Clock, notes: list[str], gap: float,
                        spare: float = 0.0) -> tuple[np.ndarray, float]:
    """When the Lagrangian bound gave nothing (its first DP solve would not fit its share: the medium bench site's
    first solve at the windowed duals scans 1.4 to 2 billion state pairs), its share continues the column
    generation from the columns it held, and the share of the bound's plans continues the local search, with the
    work both column generations left when they converged early (`spare`: the first's): from the channel DP's
    path restricted to the LP's sets (`lagrange.restricted_path`, repaired to the counts) when it has one, else
    from the best plan; the better plan is kept.
    Returns (the best plan, the continued column generation's bound)."""
    deadline = budget.deadline
    more = bound.lower_bound(inst, x, length=cg.window, iterations=400, seconds=budget.work(shares["lagrange"]),
                             deadline=windows.stopper("column generation", shares, "lagrange"), columns=cg.pool)
    deadline.count("pricing_operations", more.work)
    clock.tell("column generation", bound=more.bound)
    notes.append(f"column generation continued with the Lagrangian bound's share: {more.iterations} more "
                 f"iteration(s), {more.columns} columns, {'converged' if more.converged else 'stopped at its work budget'}")
    if _proven(_value(inst, x), max(more.bound, cg.bound), gap):
        return x, more.bound
    left = max(0.0, budget.work(shares["lagrange"]) - more.work / bound.WORK_PER_SECOND)
    seconds = budget.work(shares["bound_plans"]) + left + spare
    y = _search_from_columns(inst, x, more, seconds, windows.stopper("local search", shares, "bound_plans"),
                             deadline, clock, notes, max(more.bound, cg.bound) / (1 - max(gap, OPTIMAL_GAP)))
    return y, more.bound


def _search_from_columns(inst: PlanningInstance, x: np.ndarray, cg: bound.BoundResult, seconds: float,
                         stop: Callable[[], bool], deadline: Deadline, clock: _Clock, notes: list[str],
                         target: float) -> np.ndarray:
    """`seconds` of local search (`kicks_continued`) from the channel DP's path at the LP's duals restricted to
    the sets of its columns (`lagrange.restricted_path`, at most RESTRICTED_DP_SHARE of the work, repaired to the
    counts) when it gives one, else from `x`; returns the better of its result and `x`."""
    start = x
    if inst.req.objective != "worst_system" and not np.isfinite(inst.ceilings).any():
        path, dp_work = lagrange.restricted_path(inst, cg.multipliers, (s for _, pattern in cg.pool for s in pattern),
                                                 RESTRICTED_DP_SHARE * seconds * lagrange.WORK_PER_SECOND)
        deadline.count("dp_operations", dp_work)
        repaired = search.from_relaxation(inst, [path], stop=stop) if path is not None else None
        if repaired is not None:
            start = repaired
            seconds = max(0.0, seconds - dp_work / lagrange.WORK_PER_SECOND)
            notes.append("the local search continued from the column generation's restricted DP plan")
    y = search.iterated(inst, start, search.kick_budget(inst, seconds), inst.req.seed + 7, stop=stop,
                        counter=_Renamed(deadline, "kicks_continued"), target=target)
    if _value(inst, y) < _value(inst, x):
        clock.tell("local search", objective=_value(inst, y))
        return y
    return x


def _within(gap: float) -> str:
    return "optimal" if gap <= OPTIMAL_GAP else f"within the target gap of {100 * gap:g} %"


def _value(inst: PlanningInstance, x: np.ndarray) -> float:
    return objective_value(inst, system_estimates(inst, x))


def request_deadline(req: PlanRequirements, settings: SolveSettings) -> Deadline:
    """The request's deadline when the caller gives none, with this machine's work speed (measured before the
    deadline starts, so a first measurement is not charged to the limit)."""
    speed = calibration.speed(settings.work_speed, settings.solver_threads)
    out = Deadline.of(req.time_limit_s, settings.max_solve_s, work_speed=speed)
    out.speed_without_cp_sat = calibration.speed_without_cp_sat(settings.work_speed, settings.solver_threads)
    return out


def search_speed(deadline: Deadline, inst: PlanningInstance, max_products: int | None = None) -> float:
    """The work speed the search's budget is counted at: the deadline's, or its figure without CP-SAT when the
    full model is above `max_products` (the planner's CP-SAT will not run, so its probe does not bind; None:
    the caller may run CP-SAT whatever the size, as the re-plan does)."""
    if max_products is None:
        return deadline.work_speed
    if deadline.speed_without_cp_sat > deadline.work_speed and model.product_count(inst) > max_products:
        return deadline.speed_without_cp_sat
    return deadline.work_speed


def search_budget(deadline: Deadline, inst: PlanningInstance, after_s: float,
                  max_products: int | None = None) -> Budget:
    """The search's budget: the limit less the estimated cost of what runs before the search (preparing,
    the greedy start) and after it (`after_s`), never below MIN_SEARCH_SHARE of the limit. The work is
    WORK_MARGIN of that; the wall clock stops the search where the closing phases' reserve begins."""
    limit = deadline.limit_s
    floor = max(MIN_SEARCH_SHARE * limit, min(MIN_SEARCH_S, limit))
    window = max(floor, limit - after_s)
    speed = search_speed(deadline, inst, max_products)
    work = WORK_MARGIN * speed * max(floor, limit - after_s - costs.before_search_s(inst))
    deadline.expect(deadline.started + window + after_s)
    return deadline.budget(seconds=work, end=deadline.started + window, reserve_s=after_s, speed=speed)


def plan_site(prep: PreparedSite, req: PlanRequirements, settings: SolveSettings = SolveSettings(),
              progress: Callable[[Progress], None] | None = None, detail: str = "channel",
              with_sequences: bool = True, deadline: Deadline | None = None,
              budget: Budget | None = None) -> PlanResult:
    """Plan, then build sequences, assess, validate and evaluate the baselines.

    `deadline` is the request's (made here from the request and the server's cap if not given); `budget`,
    when given, is the search's own (the re-plan's fresh plan), else it is what the deadline leaves
    after the closing phases' reserve."""
    if req.coordination == "independent":  # each system its own plan (cohop.planning.independent imports this)
        from cohop.planning.independent import plan_independent
        return plan_independent(prep, req, settings, progress, detail, with_sequences, deadline, budget)
    deadline = deadline or (budget.deadline if budget is not None else
                            request_deadline(req, settings))
    clock = _Clock(deadline, progress)
    full = build_instance(prep, req)
    inst = without_inter_system_terms(full) if req.coordination == "independent" else full
    seq_work = sequence_work(prep, full.sizes, req.sequence_packets, costs.SEQUENCE_SHARE * deadline.limit_s) \
        if with_sequences else None
    if budget is None:
        budget = search_budget(deadline, inst, costs.after_search_s(full, detail, seq_work), settings.max_products)
    notes: list[str] = taken_back_notes(inst) + speed_notes(deadline, search_speed(deadline, inst,
                                                                                  settings.max_products))
    x, bounds, method, scale, start = _search(inst, settings, budget, clock, notes)
    estimates = system_estimates(inst, x)
    objective = objective_value(inst, estimates)
    best_bound = min(max(bounds.values()), objective)
    gap = 0.0 if objective <= 0 else max(0.0, (objective - best_bound) / objective)
    hop_sets = hop_sets_of(x)
    closing = deadline.budget(deadline.limit_s, deadline.end)  # the slot-aligned groups' CP-SAT stops at the limit
    sequences = plan_sequences(prep, hop_sets, req.seed, req.sequence_packets, seq_work, closing) \
        if with_sequences else None
    assessment = assess_site(prep, hop_sets=hop_sets, detail=detail, origin="plan",
                             sequences=sequences.orders if sequences is not None else None)
    violations = validate_plan(full, hop_sets, assessment)
    status = NO_PLAN if violations else OPTIMAL if gap <= OPTIMAL_GAP else FEASIBLE
    evaluated = evaluated_objective(full, assessment)
    if req.coordination == "independent":
        notes.append("independent coordination: the solver's objective, bound and gap are each system's own "
                     "exposure to the fixed interferers; the evaluated objective counts every system")
    baseline_results = _baselines(full, start if inst is full else None)
    notes += deadline.notes()
    report = SolverReport(status=status, objective=objective, bound=best_bound, gap=gap, time_s=deadline.elapsed(),
                          time_limit_s=deadline.limit_s, method=method, bounds=bounds, evaluated_objective=evaluated,
                          linearisation_error=objective_value(full, system_estimates(full, x)) - evaluated,
                          scale_factor=scale.factor,
                          rounding=scale.max_relative_rounding, workers=settings.solver_threads,
                          deterministic=settings.deterministic, objective_kind=req.objective,
                          requested_time_limit_s=deadline.requested_s,
                          stopped_by_wall_clock=deadline.stopped_by_wall_clock, work=dict(deadline.work_done),
                          binding=_binding(inst, x, estimates), notes=notes)
    return PlanResult(instance=inst, hop_sets=hop_sets, assessment=assessment, report=report,
                      baselines=baseline_results, violations=violations, sequences=sequences)
