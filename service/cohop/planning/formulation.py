"""Formulations of the planning problem behind one interface: build, hint, solve, extract a plan and a bound.

A formulation is built once on an instance, takes a plan as a hint (a start, or
an upper bound on the objective), and `solve` returns what it found within its
budget: a plan (or None) and a proven lower bound on the linearised objective
(or None). The engine (`planning.engine`) runs them as phases.

- `PairBooleanCpSat`: the full CP-SAT model (`planning.model`: channel
  booleans, pair booleans for the objective, every hard requirement), integer
  costs; its bound is CP-SAT's, less the rounding allowance.
- `LagrangianBound`: the channel counts relaxed (`planning.lagrange`, the
  channel DP); its plans are the DP's paths repaired to the counts
  (`search.from_relaxation`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Protocol

import numpy as np

from cohop import cpsat
from cohop.deadline import Budget
from cohop.planning import lagrange, model, search
from cohop.planning.instance import PlanningInstance
from cohop.planning.linear import objective_value, system_estimates


@dataclass
class Outcome:
    x: np.ndarray | None  # the best plan found (None: none)
    bound: float | None  # proven lower bound on the linearised objective (None: nothing proven)
    status: str  # the method's own word (CP-SAT's status name; "converged" / "stopped" for the relaxation)
    scale: model.Scale = field(default_factory=lambda: model.Scale(1.0, 0.0))
    work: float = 0.0  # the method's work count
    notes: list[str] = field(default_factory=list)


@dataclass
class SolveLimits:
    """What a solve may spend and when it may stop early."""

    budget: Budget  # the wall clock's stop
    work_s: float  # calibrated seconds of deterministic work
    gap: float  # stop once the plan is proven within this relative gap
    known_bound: float | None = None  # a bound another method proved (stop when a plan is within gap of it)
    on_solution: Callable[[float], None] | None = None
    on_bound: Callable[[float], None] | None = None
    stop: Callable[[], bool] | None = None  # an earlier wall-clock stop than the budget's (a phase's window)
    seconds_left: Callable[[], float] | None = None  # wall-clock seconds left in the phase's window


class Formulation(Protocol):
    name: str

    def hint(self, x: np.ndarray | None) -> None: ...

    def solve(self, limits: SolveLimits) -> Outcome: ...


def _scaled_floor(bound: float, constant: float, scale, objective, inst: PlanningInstance) -> float:
    """A proven bound of the real objective as a bound of the scaled model objective: every scaled cost term
    may be rounded down by up to half a unit (`model.Scale` rounds to nearest), so subtract half a unit per
    term (and per victim's constant for the worst-system objective)."""
    terms = len(objective.costs.node) + len(objective.costs.pair) + inst.n_systems
    return (bound - constant) * scale.factor - 0.5 * terms


class PairBooleanCpSat:
    """The full pair-boolean model solved by CP-SAT (`cohop.cpsat` configures every call)."""

    name = "cp_sat"

    def __init__(self, inst: PlanningInstance, threads: int, seed: int, deterministic: bool):
        self.inst, self.threads, self.seed, self.deterministic = inst, threads, seed, deterministic
        self.start: np.ndarray | None = None

    def hint(self, x: np.ndarray | None) -> None:
        self.start = x

    def solve(self, limits: SolveLimits) -> Outcome:
        inst = self.inst
        m, mv, objective, scale = model.full_model(inst, self.start)
        worst = inst.req.objective == "worst_system"
        model.minimise(m, mv, inst, objective, scale)
        constant = 0.0 if worst else mv.constant
        allowance = model.rounding_allowance(objective, mv, inst, scale)
        floor = None
        if limits.known_bound is not None and limits.known_bound > 0:
            floor = _scaled_floor(limits.known_bound, constant, scale, objective, inst)
        tell_solution = limits.on_solution or (lambda v: None)
        tell_bound = limits.on_bound or (lambda b: None)
        out = cpsat.run(m, limits.budget, "CP-SAT", limits.work_s, self.threads, self.seed, self.deterministic,
                        gap_limit=limits.gap, floor=floor,
                        on_solution=lambda v: tell_solution(v / scale.factor + constant),
                        on_bound=lambda b: tell_bound(max(0.0, b / scale.factor + constant - allowance)))
        if not out.found:
            return Outcome(None, None, out.name, scale)
        x = model.solution(out.solver, mv, inst.allowed.shape)
        proven = out.solver.best_objective_bound / scale.factor + constant - allowance
        return Outcome(x, max(proven, 0.0), out.name, scale)


class LagrangianBound:
    """The channel-count relaxation (`planning.lagrange`) warm-started from column-generation duals."""

    name = "lagrangian"

    def __init__(self, inst: PlanningInstance, multipliers: np.ndarray | None = None,
                 dual_weights: np.ndarray | None = None, theta: float = lagrange.THETA0):
        self.inst, self.multipliers, self.dual_weights, self.theta = inst, multipliers, dual_weights, theta
        self.start: np.ndarray | None = None

    def hint(self, x: np.ndarray | None) -> None:
        self.start = x

    def solve(self, limits: SolveLimits) -> Outcome:
        inst = self.inst
        upper = objective_value(inst, system_estimates(inst, self.start)) if self.start is not None else math.inf
        stops = [s for s in (limits.stop, lambda: limits.budget.expired("lagrangian bound")) if s is not None]
        result = lagrange.lagrangian_bound(inst, upper if math.isfinite(upper) else 1.0, self.multipliers,
                                           dual_weights=self.dual_weights, seconds=limits.work_s,
                                           stop=lambda: any(s() for s in stops),
                                           target=upper * (1.0 - limits.gap) if math.isfinite(upper) else None,
                                           on_bound=limits.on_bound, theta=self.theta,
                                           seconds_left=limits.seconds_left,
                                           first_rate=lagrange.FIRST_SOLVE_RATE * limits.budget.speed)
        if result.wall_capped:
            limits.budget.deadline.record_stop("lagrangian bound")  # the phase name its stopper records
        if not result.solved:
            return Outcome(None, None, "out of reach", work=result.work, notes=result.notes)
        notes = result.notes + [f"Lagrangian bound: {result.iterations} DP solve(s), "
                                f"{'converged' if result.converged else 'stopped at its work budget'}; the "
                                "relaxation drops " + result.dropped.describe(inst.ids)]
        x = None
        if result.plans and inst.req.objective != "worst_system" and not np.isfinite(inst.ceilings).any():
            x = search.from_relaxation(inst, result.plans, stop=lambda: any(s() for s in stops))
        return Outcome(x, result.bound, "converged" if result.converged else "stopped", work=result.work,
                       notes=notes)
