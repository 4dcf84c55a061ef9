"""Re-planning: meet every requirement on the changed site while changing as few channels as possible.

A change is one channel a system must newly be set to (a channel dropped is
replaced by one added). Systems new to the site are planned freely and their
channels are not counted; removed systems are simply gone.

1. Repair: keep every current channel that is still allowed and compatible
   (separation, guards), and top each system up with its least harmful open
   channels. Lower bound: a system can keep at most its current channels that
   are still allowed, so it needs at least its count less those new ones.
2. Tolerance mode: the fresh plan's objective F (planned from scratch on the
   changed site) sets the target (1 + tolerance) F. While the repaired plan
   misses it, free moves (among channels already changed) are used first and
   then, one at a time, the single best move that changes one more kept
   channel. When the plan meets the target at the lower bound, the change
   count is proven minimal; when CP-SAT's full model is small enough it
   proves the minimum directly (minimise changes subject to the target).
3. Budget mode: the best objective with at most `max_changes` changes, by the
   same free and paid moves while the budget lasts.

Time: one `Deadline` for the request. After the closing phases' reserve
(sequences, the assessments of the re-plan and of the current plan, the
answer), the search budget is split: the fresh plan (RE_SHARES["fresh"]),
the moves (wall clock only: their count is bounded by the channels), and
CP-SAT's minimum-change proof (RE_SHARES["cp_sat"]), each stopped by the
wall clock at the end of its part.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from cohop.assess import Assessment, assess_site
from cohop.errors import Conflict, PlanInfeasible
from cohop import cpsat
from cohop.planning import costs, model
from cohop.deadline import Budget, Deadline
from cohop.planning.instance import PlanningInstance, build_instance, without_inter_system_terms
from cohop.planning.linear import hop_sets_of, objective_value, system_estimates
from cohop.planning.requirements import PlanRequirements
from cohop.planning.search import Placement, best_swap
from cohop.planning.engine import PlanResult, SolveSettings, plan_site, request_deadline, search_budget
from cohop.planning.validate import Violation, validate_plan
from cohop.prepare import PreparedSite
from cohop.sequences.construct import Sequence, build_sequences
from cohop.sequences.report import SequenceOutcome, SequenceWork, delay_spread, outcome, sequence_work

MODES = ("tolerance", "budget")
DEFAULT_TOLERANCE = 0.05
#: Shares of the re-plan's search budget: the fresh plan, the moves, CP-SAT's minimum-change step.
RE_SHARES = {"fresh": 0.45, "moves": 0.10, "cp_sat": 0.45}


@dataclass(frozen=True)
class ReplanMode:
    kind: str = "tolerance"
    tolerance: float = DEFAULT_TOLERANCE
    max_changes: int | None = None


@dataclass(frozen=True)
class CurrentSystem:
    system: str
    hop_set: tuple[int, ...]
    sequence: tuple[int, ...] | None = None


@dataclass
class SystemDiff:
    id: str
    status: str  # "kept", "changed", "new system"
    dropped: list[int]
    added: list[int]
    sequence_changed: bool


@dataclass
class ReplanResult:
    instance: PlanningInstance
    hop_sets: list[np.ndarray]
    assessment: Assessment
    before: Assessment
    fresh: PlanResult
    sequences: SequenceOutcome
    diffs: list[SystemDiff]
    changes: int
    lower_bound: int
    proven_minimal: bool
    objective: float
    target: float | None
    removed: list[str]
    violations: list[Violation]
    notes: list[str] = field(default_factory=list)
    time_s: float = 0.0  # since the request arrived
    time_limit_s: float = 0.0  # the effective limit
    requested_time_limit_s: float = 0.0
    stopped_by_wall_clock: bool = False
    work: dict[str, float] = field(default_factory=dict)


def _old_masks(inst: PlanningInstance, current: dict[str, CurrentSystem]) -> np.ndarray:
    old = np.zeros_like(inst.allowed)
    for v, sid in enumerate(inst.ids):
        if sid in current:
            chans = [c for c in current[sid].hop_set if 0 <= c < inst.n_channels]
            old[v, chans] = True
    return old


def _sizes(inst: PlanningInstance, old: np.ndarray, current) -> np.ndarray:
    """Each existing system keeps its current count when its requirements allow it."""
    sizes = inst.sizes.copy()
    for v, sid in enumerate(inst.ids):
        if sid in current:
            n = int(old[v].sum())
            sizes[v] = int(np.clip(n, inst.min_size[v], inst.max_size[v]))
    return sizes


def lower_bound_changes(inst: PlanningInstance, old: np.ndarray, existing: np.ndarray) -> int:
    """At most |current and still allowed| current channels can stay, so each existing system needs at
    least size - that many new ones, whatever the plan."""
    keepable = (old & (inst.allowed | inst.pinned)).sum(axis=1)
    return int(np.maximum(0, inst.sizes - keepable)[existing].sum())


def repair(inst: PlanningInstance, old: np.ndarray) -> np.ndarray:
    """Keep what still fits (cheapest first), top up with the least harmful open channels."""
    place = Placement(inst, np.zeros_like(inst.allowed))
    for v, c in zip(*np.nonzero(inst.pinned)):
        place.add(int(v), int(c))
    for v in range(inst.n_systems):
        keep = [int(c) for c in np.flatnonzero(old[v]) if not place.x[v, c]]
        keep.sort(key=lambda c: place.table.m[v, c])
        for c in keep:
            if place.x[v].sum() < inst.sizes[v] and place.open_channels(v)[c]:
                place.add(v, c)
    for v in range(inst.n_systems):
        while place.x[v].sum() < inst.sizes[v]:
            ok = place.open_channels(v) & ~place.x[v]
            if not ok.any():
                raise PlanInfeasible([Conflict("channel count", (inst.ids[v],), f"{inst.ids[v]} cannot be topped "
                                               "up to its channel count", relax="relax its exclusions or count")])
            place.add(v, int(np.argmin(np.where(ok, place.table.m[v], np.inf))))
    return place.x.copy()


def changes_of(x: np.ndarray, old: np.ndarray, existing: np.ndarray) -> int:
    """Channels newly set on systems that exist in the current plan."""
    return int((x & ~old)[existing].sum())


def _free_or_paid_move(place: Placement, old: np.ndarray, paid: bool) -> tuple[float, int, int, int] | None:
    """Best improving swap over all systems, restricted to free moves (the channel leaving was already a
    change) or to paid ones (a kept channel leaves); (delta, v, c_out, c_in) or None."""
    best = None
    for v in range(place.inst.n_systems):
        leaving = old[v] if paid else ~old[v]
        delta, c_out, c_in = best_swap(place, v, leaving)
        scale = max(float(np.abs(place.table.m[v]).max()), 1e-300)
        if c_out >= 0 and delta < -1e-12 * scale and (best is None or delta < best[0]):
            best = (delta, v, c_out, c_in)
    return best


def _apply(place: Placement, move: tuple) -> None:
    _, v, c_out, c_in = move
    place.remove(v, c_out)
    place.add(v, c_in)


def _descend_free(place: Placement, old: np.ndarray, limit: int = 10_000, stop=None) -> None:
    for _ in range(limit):
        if stop is not None and stop():
            return
        move = _free_or_paid_move(place, old, paid=False)
        if move is None:
            return
        _apply(place, move)


def _spend(inst, x, old, existing, budget: int | None, target: float | None, stop=None) -> np.ndarray:
    """Free moves, then one paid move at a time, until the target is met or the budget is spent (or the
    wall clock's `stop()`)."""
    place = Placement(inst, x)
    _descend_free(place, old, stop=stop)
    while stop is None or not stop():
        value = objective_value(inst, system_estimates(inst, place.x))
        if target is not None and value <= target:
            break
        if budget is not None and changes_of(place.x, old, existing) >= budget:
            break
        move = _free_or_paid_move(place, old, paid=True)
        if move is None:
            break
        _apply(place, move)
        _descend_free(place, old, stop=stop)
    return place.x.copy()


def _cp_sat_minimum(inst, start, old, existing, target, settings: SolveSettings, budget: Budget, lower: int):
    """Minimise changes subject to the objective target on the full model; (x, proven) or (None, False).
    `lower` (the arithmetic lower bound on changes) is the objective's floor: a plan with that many changes is
    proven optimal at once."""
    m, mv, objective, scale = model.full_model(inst, start)
    m.add(model.weighted_sum(mv, objective, scale) <= int(math.floor((target - mv.constant) * scale.factor)))
    # changes = channels newly set on existing systems
    m.minimize(sum(mv.x[v, c] for (v, c) in mv.x if existing[v] and not old[v, c]))
    out = cpsat.run(m, budget, "CP-SAT minimum change", budget.seconds, settings.solver_threads, inst.req.seed,
                    settings.deterministic, floor=lower)
    if not out.found:
        return None, False
    x = model.solution(out.solver, mv, inst.allowed.shape)
    return x, out.status == cpsat.cp_model.OPTIMAL or changes_of(x, old, existing) <= lower


def _sequences(prep: PreparedSite, hop_sets, current: dict[str, CurrentSystem], seed: int,
               packets: int, work: SequenceWork, budget: Budget) -> tuple[SequenceOutcome, list[bool]]:
    """New sequences where hop sets (or a slot-aligned group's sets) changed; the current ones elsewhere."""
    fresh, notes = build_sequences(prep, hop_sets, seed, delay_spread(prep), work.group_work_s, budget=budget)
    ids = [s.id for s in prep.site.systems]
    groups_changed = set()
    for v, s in enumerate(prep.site.systems):
        cur = current.get(s.id)
        if s.time_base_group and (cur is None or sorted(cur.hop_set) != hop_sets[v].tolist()):
            groups_changed.add(s.time_base_group)
    out, changed = [], []
    for v, seq in enumerate(fresh):
        cur = current.get(ids[v])
        same_set = cur is not None and sorted(cur.hop_set) == hop_sets[v].tolist()
        keep = (same_set and cur.sequence is not None and sorted(set(cur.sequence)) == hop_sets[v].tolist()
                and prep.site.systems[v].time_base_group not in groups_changed)
        if keep:
            out.append(Sequence(system=v, channels=np.asarray(cur.sequence), construction="kept", component=-1,
                                required_spacing=seq.required_spacing, group=seq.group))
        else:
            out.append(seq)
        changed.append(not keep)
    return outcome(prep, out, notes, packets, seed, work), changed


def replan_site(prep: PreparedSite, req: PlanRequirements, current: list[CurrentSystem], mode: ReplanMode,
                settings: SolveSettings = SolveSettings(), deadline: Deadline | None = None,
                budget: Budget | None = None) -> ReplanResult:
    """`deadline`: the request's (made here if not given); `budget`, if given, is the search's own (else what
    the deadline leaves after the closing phases' reserve)."""
    deadline = deadline or (budget.deadline if budget is not None else
                            request_deadline(req, settings))
    cur = {c.system: c for c in current}
    ids = [s.id for s in prep.site.systems]
    removed = sorted(set(cur) - set(ids))
    notes = []
    full = build_instance(prep, req)
    seq_work = sequence_work(prep, full.sizes, req.sequence_packets, costs.SEQUENCE_SHARE * deadline.limit_s)
    budget = budget or search_budget(deadline, full, costs.replan_after_search_s(full, seq_work))
    fresh_budget, moves_budget, cp_budget = budget.split([RE_SHARES["fresh"], RE_SHARES["moves"], RE_SHARES["cp_sat"]])
    fresh_req = PlanRequirements(**{**req.__dict__, "baselines": ()})
    fresh = plan_site(prep, fresh_req, settings, detail="system", with_sequences=False, budget=fresh_budget)
    # the objective the fresh plan used
    base = without_inter_system_terms(full) if req.coordination == "independent" else full
    old = _old_masks(base, cur)
    existing = np.array([sid in cur for sid in ids])
    inst = base.with_sizes(_sizes(base, old, cur))
    x = repair(inst, old)
    lower = lower_bound_changes(inst, old, existing)
    target = None
    stop = moves_budget.stopper("re-plan moves")
    if mode.kind == "tolerance":
        target = (1.0 + mode.tolerance) * fresh.report.objective
        x = _spend(inst, x, old, existing, None, target, stop)
    else:
        if mode.max_changes is not None and lower > mode.max_changes:
            raise PlanInfeasible([Conflict("change budget", tuple(ids[v] for v in range(len(ids)) if existing[v]),
                                           f"at least {lower} channels must change (they are now excluded, or the "
                                           f"counts grew), more than max_changes {mode.max_changes}",
                                           relax=f"allow at least {lower} changes")])
        x = _spend(inst, x, old, existing, mode.max_changes, None, stop)
        if mode.max_changes is not None and changes_of(x, old, existing) > mode.max_changes:
            raise PlanInfeasible([Conflict("change budget", tuple(ids[v] for v in range(len(ids)) if existing[v]),
                                           f"no plan within {mode.max_changes} changes was found: keeping the "
                                           f"current channels needs {changes_of(x, old, existing)} (separation, "
                                           "guards or exclusions)", relax="allow more changes")], proven=False)
    changes = changes_of(x, old, existing)
    proven = changes == lower
    value = objective_value(inst, system_estimates(inst, x))
    if mode.kind == "tolerance" and value > target * (1 + 1e-12):
        notes.append("the tolerance was not reached by the change-limited search; the plan is the best found")
    if (mode.kind == "tolerance" and not proven and model.product_count(inst) <= settings.max_products):
        cx, cp_proven = _cp_sat_minimum(inst, x, old, existing, max(value, target), settings, cp_budget, lower)
        if cx is not None and changes_of(cx, old, existing) <= changes:
            x, changes, proven = cx, changes_of(cx, old, existing), cp_proven
            value = objective_value(inst, system_estimates(inst, x))
            if proven:
                lower = changes  # CP-SAT proved no plan within the target changes fewer
    hop_sets = hop_sets_of(x)
    closing = deadline.budget(deadline.limit_s, deadline.end)
    seqs, seq_changed = _sequences(prep, hop_sets, cur, req.seed, req.sequence_packets, seq_work, closing)
    assessment = assess_site(prep, hop_sets=hop_sets, origin="plan", sequences=seqs.orders)
    before_sets = [np.array(sorted(cur[sid].hop_set)) if sid in cur else hop_sets[v] for v, sid in enumerate(ids)]
    before = assess_site(prep, hop_sets=before_sets, detail="system", origin="current")
    diffs = []
    for v, sid in enumerate(ids):
        if sid not in cur:
            diffs.append(SystemDiff(sid, "new system", [], hop_sets[v].tolist(), True))
            continue
        dropped = sorted(set(np.flatnonzero(old[v]).tolist()) - set(hop_sets[v].tolist()))
        added = sorted(set(hop_sets[v].tolist()) - set(np.flatnonzero(old[v]).tolist()))
        diffs.append(SystemDiff(sid, "changed" if added or dropped else "kept", dropped, added, seq_changed[v]))
    violations = validate_plan(full, hop_sets, assessment)
    notes += deadline.notes()
    return ReplanResult(instance=inst, hop_sets=hop_sets, assessment=assessment, before=before, fresh=fresh,
                        sequences=seqs, diffs=diffs, changes=changes, lower_bound=lower, proven_minimal=proven,
                        objective=value, target=target, removed=removed, violations=violations, notes=notes,
                        time_s=deadline.elapsed(), time_limit_s=deadline.limit_s,
                        requested_time_limit_s=deadline.requested_s,
                        stopped_by_wall_clock=deadline.stopped_by_wall_clock, work=dict(deadline.work_done))
