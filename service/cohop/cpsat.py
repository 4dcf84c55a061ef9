"""The one place that configures and runs CP-SAT, for every caller.

Plan (`engine._cp_sat`), the re-plan's minimum-change step, the infeasibility
diagnosis and the slot-aligned sequence construction all solve through
`run`, so each call gets the same rules:

- threads: the server's `COHOP_SOLVER_THREADS` (diagnosis with assumptions
  asks for one), and the request's seed;
- work: deterministic time (`work_s` calibrated seconds times
  `DETERMINISTIC_UNITS_PER_SECOND`), with `interleave_search` when several
  workers run, so that the same model and seed give the same answer; with
  `COHOP_DETERMINISTIC=false` the work is wall-clock seconds instead;
- a wall-clock stop: `max_time_in_seconds` is always what is left of the
  budget, so no call outlives the request's limit; a call the wall clock
  stopped is recorded on the deadline (the answer says the run may differ);
- an early end: optimisation calls stop at a relative gap of `gap_limit`
  (what the service calls optimal). A bound already proven by another
  method enters as `floor`, the lower end of the objective's domain, so
  that CP-SAT's own gap test ends the search once a solution is close
  enough to it. Nothing ever calls `stop_search()`: in OR-Tools 9.15 a
  stop asked during interleaved search aborts the whole process ("Check
  failed: solution->size() == postsolve_mapping.size()"), from inside the
  solution callback always, from another thread in about one call in
  three on a loaded machine (measured; tests/planning/test_cpsat_stop.py).
- with a floor, a hint the model's own constraints reject is dropped
  (`hint_satisfies`): it gives the search nothing, and with a floor under
  interleaved search it aborts OR-Tools 9.15 ("Check failed: heuristics.fixed_search != nullptr",
  the open-pit sample, whose loss ceilings the linearised model cannot
  meet).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

from ortools.sat.python import cp_model

from cohop.deadline import Budget

#: CP-SAT deterministic time units per calibrated second of work. Measured on our 2-core machines with two
#: interleaved workers (batches of one task per worker): 0.34 to 0.8 units per wall second on the samples'
#: full models; one worker does about 0.25 (`bench/bench_timelimits.py --phases` prints it).
DETERMINISTIC_UNITS_PER_SECOND = 0.35
#: Building a full plan model in Python costs about this per pair boolean (samples: 3 000 booleans,
#: 0.15 to 0.3 s; the medium bench site: 52 000, 2.8 s).
BUILD_S_PER_PRODUCT = 8e-5
#: The largest value a CP-SAT domain may hold ((2^63 - 1) / 2, cp_model.proto); the objective's open top.
DOMAIN_TOP = 2**62 - 1
#: Below this many wall seconds left, a call is not started at all.
MIN_WALL_S = 0.005


@dataclass
class Outcome:
    status: int
    solver: cp_model.CpSolver
    started: bool = True

    @property
    def name(self) -> str:
        return self.solver.status_name(self.status)

    @property
    def found(self) -> bool:
        return self.status in (cp_model.OPTIMAL, cp_model.FEASIBLE)


class _Watcher(cp_model.CpSolverSolutionCallback):
    """Reports each solution's objective; it never stops the search (see the module's docstring)."""

    def __init__(self, on_solution: Callable[[float], None]):
        super().__init__()
        self.on_solution = on_solution

    def on_solution_callback(self) -> None:
        self.on_solution(self.objective_value)


def set_floor(m: cp_model.CpModel, floor: float) -> None:
    """Declare `floor`, a proven lower bound of the minimised objective (offset included), as the lower end
    of the objective's domain. The domain is on the sum of the objective's terms, without the offset
    (cp_model.proto, CpObjectiveProto.domain); rounding down keeps it a bound."""
    objective = m.proto.objective
    inner = min(math.floor(floor - objective.offset), DOMAIN_TOP)
    objective.domain.clear()
    objective.domain.extend([int(inner), DOMAIN_TOP])


def _literal(values: dict, lit: int) -> bool:
    return values[lit] == 1 if lit >= 0 else values[-lit - 1] == 0


def _within(value: int, domain) -> bool:
    bounds = list(domain)
    return any(bounds[i] <= value <= bounds[i + 1] for i in range(0, len(bounds), 2))


def _holds(c, values: dict) -> bool:
    """Whether constraint `c` holds for the hinted `values` (KeyError when it reads a variable without a
    hint; a kind of constraint not read here counts as not met)."""
    if c.has_linear():
        return _within(sum(k * values[v] for v, k in zip(c.linear.vars, c.linear.coeffs)), c.linear.domain)
    if c.has_bool_or():
        return any([_literal(values, lit) for lit in c.bool_or.literals])
    if c.has_bool_and():
        return all([_literal(values, lit) for lit in c.bool_and.literals])
    if c.has_at_most_one():
        return sum(_literal(values, lit) for lit in c.at_most_one.literals) <= 1
    if c.has_exactly_one():
        return sum(_literal(values, lit) for lit in c.exactly_one.literals) == 1
    return False


def hint_satisfies(m: cp_model.CpModel) -> bool:
    """Whether the model's hint meets every constraint it decides: a constraint that reads a variable without
    a hint (the worst-system objective's `worst`, left to the solver) is not judged, an enforced one only
    when its enforcement literals hold. Domains are not read: our models declare Booleans and hint them 0 or
    1, and reading 50 000 domains costs more than the constraints."""
    p = m.proto
    values = dict(zip(p.solution_hint.vars, p.solution_hint.values))
    for c in p.constraints:
        try:
            if all([_literal(values, lit) for lit in c.enforcement_literal]) and not _holds(c, values):
                return False
        except KeyError:
            continue
    return True


def configure(solver: cp_model.CpSolver, budget: Budget, work_s: float, workers: int, seed: int,
              deterministic: bool, gap_limit: float | None = None) -> None:
    p = solver.parameters
    p.num_workers = max(1, int(workers))
    p.random_seed = int(seed) % (2**31)
    left = budget.left()
    if deterministic:
        p.interleave_search = p.num_workers > 1
        # one task per worker per batch: with larger batches CP-SAT overshoots its deterministic limit about
        # twofold (measured), and the work would no longer follow the budget
        p.interleave_batch_size = p.num_workers
        p.max_deterministic_time = max(0.0, work_s) * DETERMINISTIC_UNITS_PER_SECOND
        p.max_time_in_seconds = left
    else:
        p.max_time_in_seconds = min(max(0.0, work_s), left)
    if gap_limit is not None:
        p.relative_gap_limit = gap_limit


def run(m: cp_model.CpModel, budget: Budget, phase: str, work_s: float, workers: int, seed: int,
        deterministic: bool, gap_limit: float | None = None, floor: float | None = None,
        on_solution: Callable[[float], None] | None = None,
        on_bound: Callable[[float], None] | None = None) -> Outcome:
    """Solve `m` within the budget. `floor` (a proven lower bound) and the callbacks are in the model's
    (scaled) objective units; with a floor and no `gap_limit`, a solution at the floor ends the search."""
    solver = cp_model.CpSolver()
    if floor is not None:  # before the wall clock is read for the solve: the hint check takes up to ~0.3 s
        if len(m.proto.solution_hint.vars) and not hint_satisfies(m):
            m.clear_hints()  # the abort needs the floor: without one CP-SAT answers INFEASIBLE (measured)
        set_floor(m, floor)
    if budget.left() < MIN_WALL_S:
        budget.expired(phase)
        return Outcome(cp_model.UNKNOWN, solver, started=False)
    configure(solver, budget, work_s, workers, seed, deterministic, gap_limit)
    if on_bound is not None:
        solver.best_bound_callback = on_bound
    watcher = _Watcher(on_solution) if on_solution is not None else None
    status = solver.solve(m, watcher) if watcher is not None else solver.solve(m)
    p = solver.parameters
    unfinished = status not in (cp_model.OPTIMAL, cp_model.INFEASIBLE, cp_model.MODEL_INVALID)
    budget.deadline.count("cp_sat_deterministic_time", solver.deterministic_time)
    work_left = (solver.deterministic_time < 0.99 * p.max_deterministic_time if deterministic
                 else p.max_time_in_seconds < work_s)
    if unfinished and work_left and solver.wall_time >= 0.95 * p.max_time_in_seconds:
        budget.deadline.record_stop(phase)
    return Outcome(status, solver)
