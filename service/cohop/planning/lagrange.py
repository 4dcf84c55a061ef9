"""A lower bound by Lagrangian relaxation of the channel counts, maximised by subgradient steps.

For multipliers lambda (one per system, per channel use, any sign) and victim
weights w,

    L(lambda) = min_x [ F_w(x) - lambda . |x| ] + lambda . N

is at most the best plan's objective, where F_w is the weighted linearised
objective with the terms `channel_dp.Relaxation` drops left out (pair costs at
offsets >= 2, which are >= 0; separations and guards beyond one channel) and
x ranges over every choice of systems per channel that keeps the rest (the
counts |x_v| = N_v are what is relaxed). The inner minimum is the channel DP
(`channel_dp.solve`), exact, so every L(lambda) computed is a proven bound,
whatever the multipliers: the loop may stop at any time. For the worst-system
objective, max_v c_v >= sum_v mu_v c_v for any weights mu >= 0 summing to 1,
so the same bound with w = mu bounds it (mu from the column generation's duals).

The multipliers start from the column generation's duals of its channel-use
rows (`bound.BoundResult.multipliers`: the LP's price of one channel use),
and move along the subgradient N - |x*| with Polyak's step
theta (U - L) / |g|^2 (U the best plan's objective, theta halved after a few
steps without a better bound). Work is counted in the DP's states and
transition pairs (`channel_dp.PathSolution.work`), so a budget repeats exactly.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from cohop.planning import channel_dp
from cohop.planning.instance import PlanningInstance

#: DP operations (states enumerated plus transition pairs) per calibrated second: turns a time share into a
#: work budget. The vectorised min-plus (`channel_dp._min_plus`) evaluates 3.9 x 10^8 pairs per second on the
#: medium bench site (first solves at the windowed duals, 1.5 and 2.25 billion pairs) on a machine where the
#: local search runs at 3 to 4 x its calibration (`calibration`, at most 3 is used), so the figure stays
#: below what a budget scaled by the measured speed asks of it.
WORK_PER_SECOND = 1.2e8
#: Halve the step factor after this many steps without a better bound; stop when it falls below MIN_THETA.
PATIENCE = 5
MIN_THETA = 1e-3
#: The first step factor (Polyak's theta) from the co-channel LP's duals, and from a windowed LP's (closer).
THETA0 = 1.0
THETA_NEAR = 0.2
#: Deflected subgradient: each step follows g + DEFLECTION times the previous direction (damps the zigzag).
DEFLECTION = 0.0
#: DP operations per wall second assumed for a call's first solve when the phase's wall-clock window caps it
#: (`seconds_left`): half of WORK_PER_SECOND, since one solve cannot be interrupted and the DP's rate varies
#: (0.8 to 1.6 x 10^8 per second measured on one slow shared machine, medium site); later solves use the rate
#: the previous solve reached.
FIRST_SOLVE_RATE = 0.5 * WORK_PER_SECOND
#: Keep the DP plans of this many multipliers (those whose counts lie closest to the requirement) as starts.
KEEP_PLANS = 3


@dataclass
class LagrangeResult:
    bound: float  # proven lower bound on the linearised objective (0 when the DP could not be solved)
    multipliers: np.ndarray | None  # those of the best bound
    iterations: int
    work: float  # DP operations spent
    solved: bool  # False when the relaxation is out of the DP's reach (too many systems or states)
    converged: bool  # the step factor fell below MIN_THETA or the bound reached the target
    dropped: channel_dp.Dropped | None = None
    plans: list[np.ndarray] = field(default_factory=list)  # DP paths (wrong counts) to repair into starts
    notes: list[str] = field(default_factory=list)
    wall_capped: bool = False  # a solve was refused because it would have passed the phase's wall-clock window


def victim_weights(inst: PlanningInstance, dual_weights: np.ndarray | None) -> np.ndarray:
    """The weights of the relaxed objective: the request's priority weights for the weighted sum; for the worst
    system, the column generation's victim duals (normalised), or equal weights."""
    if inst.req.objective != "worst_system":
        return inst.weights.astype(float)
    mu = np.zeros(inst.n_systems) if dual_weights is None else np.maximum(np.asarray(dual_weights, float), 0.0)
    if mu.sum() <= 0:
        mu = np.ones(inst.n_systems)
    return mu / mu.sum()


def value_at(rel: channel_dp.Relaxation, lam: np.ndarray, weights: np.ndarray,
             max_work: float = math.inf) -> tuple[float, channel_dp.PathSolution]:
    """L(lambda) and the DP's solution (the bound is -inf when the DP gave up)."""
    sol = channel_dp.solve(rel, lam, weights, max_work=max_work)
    if not sol.complete:
        return -math.inf, sol
    n = rel.inst.sizes.astype(float)
    return float(sol.value + lam @ n + weights @ rel.constant), sol


def lagrangian_bound(inst: PlanningInstance, upper: float, start: np.ndarray | None = None,
                     dual_weights: np.ndarray | None = None, seconds: float | None = None,
                     max_iterations: int = 10_000, stop: Callable[[], bool] | None = None,
                     target: float | None = None, on_bound: Callable[[float], None] | None = None,
                     theta: float = THETA0, seconds_left: Callable[[], float] | None = None,
                     first_rate: float = FIRST_SOLVE_RATE) -> LagrangeResult:
    """Maximise L(lambda) from `start` (the column generation's multipliers; zeros if None).

    `upper` is the best plan's objective (Polyak's target). It stops after `max_iterations`, when one more DP
    solve as costly as the last would take its work past `seconds` worth of WORK_PER_SECOND, when `stop()` (the wall clock) says so, or as soon as the bound
    reaches `target` (the plan is then proven within the requested gap). `theta` is the first step factor:
    smaller when the start is near the optimum (the duals of a converged or nearly converged windowed LP).
    `seconds_left` (wall-clock seconds left in the phase's window) caps each solve's work too, at the rate the
    previous solve reached (`first_rate` for the first: FIRST_SOLVE_RATE times the budget's work speed): a
    solve cannot be interrupted, so on a machine
    slower than the calibration one that would overrun the window is not started (`wall_capped`)."""
    s = inst.n_systems
    if s > channel_dp.MAX_SYSTEMS:
        return LagrangeResult(0.0, None, 0, 0.0, False, False,
                              notes=[f"Lagrangian bound skipped: more than {channel_dp.MAX_SYSTEMS} systems"])
    rel = channel_dp.relax(inst)
    weights = victim_weights(inst, dual_weights)
    lam = np.zeros(s) if start is None else np.asarray(start, dtype=float).copy()
    n = inst.sizes.astype(float)
    budget = math.inf if seconds is None else seconds * WORK_PER_SECOND
    best, best_lam, work, since = -math.inf, lam.copy(), 0.0, 0
    plans: list[tuple[float, int, np.ndarray]] = []
    converged, it = False, 0
    direction = None
    rate = first_rate
    for it in range(1, max_iterations + 1):
        by_wall = math.inf if seconds_left is None else seconds_left() * rate
        by_budget = budget - work
        started = time.monotonic()
        value, sol = value_at(rel, lam, weights, max_work=min(by_budget, by_wall))
        elapsed = time.monotonic() - started
        work += sol.work
        if sol.over_budget and by_wall < by_budget and sol.estimated_work <= by_budget:  # the window, not the
            # work budget, refused it (a solve the work budget refuses too is the work budget's stop: repeatable)
            return LagrangeResult(max(best, 0.0), best_lam if math.isfinite(best) else None, it, work,
                                  math.isfinite(best), False, rel.dropped, [p for _, _, p in plans],
                                  notes=["Lagrangian bound stopped: the next DP solve would have passed its "
                                         "wall-clock window (a machine slower than calibrated)"], wall_capped=True)
        if sol.complete and sol.work >= 1e6 and elapsed > 0:
            rate = sol.work / elapsed
        if sol.over_budget and math.isfinite(best) and theta >= MIN_THETA:
            # the step overshot into a costly region (many states): halve it back towards the best multipliers
            lam, theta = 0.5 * (lam + best_lam), theta / 2.0
            continue
        if not sol.complete:
            why = ("the next DP solve's estimated work exceeded what its budget had left" if sol.over_budget
                   else f"a channel class had more than {channel_dp.STATE_CAP} states")
            return LagrangeResult(max(best, 0.0), best_lam if math.isfinite(best) else None, it, work,
                                  math.isfinite(best), False, rel.dropped, [p for _, _, p in plans],
                                  notes=["Lagrangian bound stopped: " + why])
        if sol.x is None:  # the kept constraints leave no plan at all: nothing to bound
            break
        if value > best + 1e-15 * max(1.0, abs(best) if math.isfinite(best) else 1.0):
            best, best_lam, since = value, lam.copy(), 0
            if on_bound is not None:
                on_bound(max(best, 0.0))
        else:
            since += 1
        g = n - sol.x.sum(axis=1)
        _keep_plan(plans, sol.x, float(np.abs(g).sum()), it)
        if target is not None and best >= target:
            converged = True
            break
        if not g.any():  # the DP's path meets every count: it is optimal for the relaxation; nothing above it
            converged = True
            break
        if since >= PATIENCE:
            theta, since = theta / 2.0, 0
        if theta < MIN_THETA or work + sol.work > budget or (stop is not None and stop()):  # the next solve would
            # cost about as much as this one: stop before it overruns the work budget
            converged = theta < MIN_THETA
            break
        direction = g if direction is None else g + DEFLECTION * direction
        step = theta * max(upper - value, 1e-12 * max(1.0, abs(upper))) / float(direction @ direction)
        lam = lam + step * direction
    return LagrangeResult(max(best, 0.0), best_lam, it, work, True, converged, rel.dropped,
                          [p for _, _, p in sorted(plans, key=lambda t: (t[0], t[1]))])


def _keep_plan(plans: list, x: np.ndarray, deviation: float, it: int) -> None:
    """Keep the KEEP_PLANS DP paths whose counts deviate least from the requirement (earliest first on ties)."""
    if any(np.array_equal(x, p) for _, _, p in plans):
        return
    plans.append((deviation, it, x.copy()))
    plans.sort(key=lambda t: (t[0], t[1]))
    del plans[KEEP_PLANS:]


def restricted_path(inst: PlanningInstance, multipliers: np.ndarray, sets, max_work: float,
                    dual_weights: np.ndarray | None = None) -> tuple[np.ndarray | None, float]:
    """A plan's raw material, not a bound: the channel DP at the column generation's multipliers with each
    channel's states restricted to `sets` (iterables of systems: those of the LP's columns) and the pins alone.
    The restricted DP is cheap where the full one is not (medium bench site: about 3 000 states and 0.2 s
    against 15 000 states and 6 s), and its path, repaired to the counts (`search.from_relaxation`), starts a
    local search that beat the search from the best plan in our runs there (1.512 against 1.523 after the same
    kicks). Returns (the path or None when out of reach, the DP work spent)."""
    if inst.n_systems > channel_dp.MAX_SYSTEMS or multipliers is None:
        return None, 0.0
    masks = np.array(sorted({sum(1 << int(v) for v in s) for s in sets}), dtype=np.int64)
    sol = channel_dp.solve(channel_dp.relax(inst), np.asarray(multipliers, float), victim_weights(inst, dual_weights),
                           max_work=max_work, only=masks)
    return (sol.x if sol.complete else None), float(sol.work)
