"""Explain infeasibility: which requirements conflict, in the user's terms.

A diagnostic CP-SAT model without objective ties each requirement instance to
an assumption literal (see `cohop.planning.model`); CP-SAT's sufficient
assumptions for infeasibility give a conflicting set, which a deletion
filter shrinks. Quick arithmetic checks come first and answer the common
cases (too few allowed channels; a ceiling the interferers alone exceed).
The work (half for the first solve, half shared by the deletion filter's)
and the wall clock (the budget's end) bound every CP-SAT call; a filter cut
short leaves a conflicting set that is valid but may not be minimal.
"""

from __future__ import annotations

import math

import numpy as np
from ortools.sat.python import cp_model

from cohop.errors import Conflict
from cohop import cpsat
from cohop.planning import model as groups
from cohop.deadline import Budget, Deadline
from cohop.planning.instance import PlanningInstance, runs

#: Calibrated seconds of CP-SAT work for a diagnosis when the caller gives no budget.
DEFAULT_WORK_S = 5.0


def _count_conflict(inst: PlanningInstance, v: int) -> Conflict:
    sid = inst.ids[v]
    r = inst.req.for_system(sid)
    source = "min_channels" if r.min_channels and r.min_channels >= inst.min_size[v] else \
        f"the {inst.prep.profile.id} profile's channel count, power and occupancy rules"
    return Conflict("channel count", (sid,), f"{sid} needs {inst.min_size[v]} channels ({source})",
                    relax=f"lower {sid}'s channel count if the profile allows it")


def _exclusion_conflict(inst: PlanningInstance, v: int, why: str, chan_runs) -> Conflict:
    sid = inst.ids[v]
    if why.startswith("interferer"):
        relax = (f"raise interferer_threshold above {inst.req.interferer_threshold:g}, or deal with the "
                 f"{why} (move, retune or shield it)")
    else:
        relax = f"remove some of {sid}'s excluded channels"
    return Conflict("exclusion", (sid,), f"{why} excludes channels {_fmt(chan_runs)} for {sid}",
                    channels=tuple(chan_runs), relax=relax)


def _separation_conflict(inst: PlanningInstance, v: int) -> Conflict:
    sid = inst.ids[v]
    return Conflict("separation", (sid,), f"{sid}'s channels must be at least {inst.separation[v]} grid steps "
                    "apart", inst.separation_citation[v], relax="use a grid with wider channel spacing")


def _fmt(chan_runs) -> str:
    return ", ".join(f"{lo}" if lo == hi else f"{lo}-{hi}" for lo, hi in chan_runs)


def quick_checks(inst: PlanningInstance) -> list[list[Conflict]]:
    """Per system: too few channels left, or a ceiling that fixed interferers alone exceed."""
    out = []
    for v in range(inst.n_systems):
        pool = np.flatnonzero(inst.allowed[v] | inst.pinned[v])
        capacity = _capacity(pool, int(inst.separation[v]))
        if capacity < inst.min_size[v]:
            conflict = [_count_conflict(inst, v)]
            conflict += [_exclusion_conflict(inst, v, why, r) for why, r in inst.exclusions.get(v, [])]
            if inst.separation[v] > 1:
                conflict.append(_separation_conflict(inst, v))
            conflict[0] = Conflict(conflict[0].requirement, conflict[0].systems,
                                   conflict[0].detail + f" but at most {capacity} are available", relax=conflict[0].relax)
            out.append(conflict)
            continue
        ceiling = inst.ceilings[v]
        if math.isfinite(ceiling):
            cleanest = np.sort(inst.interferer_cost[v, pool])[: inst.min_size[v]].mean()
            if ceiling < 0 or cleanest > ceiling:
                sid = inst.ids[v]
                out.append([Conflict("loss ceiling", (sid,), f"{sid}'s loss ceiling cannot be met: fading and the "
                                     "fixed interferers alone exceed it on its cleanest channels",
                                     relax=f"raise {sid}'s loss ceiling, its fade margin or its retry limit")])
    return out


def _capacity(pool: np.ndarray, sep: int) -> int:
    """Most channels of `pool` that can be taken at least `sep` apart (greedy from the left is optimal)."""
    count, last = 0, -10**9
    for c in pool:
        if c - last >= sep:
            count, last = count + 1, c
    return count


class _Registry:
    def __init__(self, m: cp_model.CpModel, inst: PlanningInstance):
        self.m, self.inst = m, inst
        self.literals: list[cp_model.IntVar] = []
        self.conflicts: list[Conflict] = []

    def __call__(self, kind: str, key: tuple):
        inst = self.inst
        if kind == "count":
            c = _count_conflict(inst, key[0])
        elif kind == "exclusion":
            c = _exclusion_conflict(inst, key[0], key[1], key[2])
        elif kind == "pins":
            sid = inst.ids[key[0]]
            c = Conflict("pinned channels", (sid,), f"{sid} must keep channels "
                         f"{_fmt(runs(np.flatnonzero(inst.pinned[key[0]])))}", relax=f"unpin some of {sid}'s channels")
        elif kind == "separation":
            c = _separation_conflict(inst, key[0])
        elif kind == "guard":
            a, b = inst.ids[key[0]], inst.ids[key[1]]
            c = Conflict("guard", (a, b), f"{a} and {b} must keep out of each other's threshold windows",
                         relax="raise guard_excess_db or drop the guard")
        else:
            sid = inst.ids[key[0]]
            c = Conflict("loss ceiling", (sid,), f"{sid}'s loss ceiling", relax=f"raise {sid}'s loss ceiling")
        lit = self.m.new_bool_var(kind)
        self.literals.append(lit)
        self.conflicts.append(c)
        return lit


def _solve(m: cp_model.CpModel, assumptions, budget: Budget, work_s: float, seed: int, deterministic: bool):
    m.clear_assumptions()
    m.add_assumptions(assumptions)
    # assumption cores need a single worker
    out = cpsat.run(m, budget, "infeasibility diagnosis", work_s, workers=1, seed=seed, deterministic=deterministic)
    return out.status, out.solver


def diagnose(inst: PlanningInstance, budget: Budget | None = None, work_s: float = DEFAULT_WORK_S, seed: int = 0,
             deterministic: bool = True) -> tuple[list[Conflict] | None, bool]:
    """(conflicting requirements, proven) if no plan exists; (None, True) if a plan exists.

    `work_s`: calibrated seconds of CP-SAT work in all; `budget`: the wall-clock stop (by default, a
    deadline of twice the work)."""
    quick = quick_checks(inst)
    if quick:
        return quick[0], True
    if budget is None:
        own = Deadline.of(2 * work_s + 1.0, 2 * work_s + 1.0)
        budget = own.budget(own.limit_s, own.end)
    m = cp_model.CpModel()
    reg = _Registry(m, inst)
    m, mv = groups.build(inst, [groups.ChannelVariables(keep_excluded=True), groups.Exclusions(), groups.ChannelCounts(),
                                groups.Pins(), groups.Separation(), groups.Guards()], reg, model=m)
    status, solver = _solve(m, reg.literals, budget, 0.5 * work_s, seed, deterministic)
    if status in (cp_model.OPTIMAL, cp_model.FEASIBLE):
        return None, True
    if status != cp_model.INFEASIBLE:
        return [Conflict("time", (), "no plan was found and none was proven impossible in the time allowed",
                         relax="raise the time limit")], False
    index = {lit.index: i for i, lit in enumerate(reg.literals)}
    core = [index[i] for i in solver.sufficient_assumptions_for_infeasibility() if i in index]
    keep = list(core)
    each = 0.5 * work_s / max(1, len(core))
    for i in list(core):  # deletion filter: drop what the conflict does not need
        if budget.expired("infeasibility diagnosis"):
            break
        trial = [j for j in keep if j != i]
        st, _ = _solve(m, [reg.literals[j] for j in trial], budget, each, seed, deterministic)
        if st == cp_model.INFEASIBLE:
            keep = trial
    return [reg.conflicts[i] for i in keep], True
