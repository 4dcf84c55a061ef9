"""Independent planning: each system chooses its own hop set from what its own receivers observe.

47 CFR 15.247(h) does not permit coordinating FHSS systems for the express
purpose of avoiding simultaneous occupancy of individual hopping frequencies;
it does permit a system to recognise other users of the band and adapt to
them. This mode plans as such adaptive radios would commission themselves:

1. Systems go on air one at a time, in the commissioning order
   (`PlanRequirements.commissioning_order`; systems not named follow in the
   site's order).
2. When system v is commissioned it avoids (basis "occupancy", the default)
   every channel where a fixed or measured interferer's predicted hit
   probability exceeds `interferer_threshold` (exactly as the joint planner
   excludes them) and every channel where the occupancy of a system already
   on air, as v's receivers would see it (that system's predicted per-hop hit
   probability on v there, `cohop.assess.system_collisions`), exceeds the
   same threshold, as an adaptive radio avoids measured occupancy. With
   basis "interferers" it avoids the interferers alone.
3. It then hops over every channel it may use: all that remain (its explicit
   exclusions, the profile's band and separation respected), at most its
   `max_channels` (the lowest-exposure ones when that cuts), at least its
   minimum (the profile's, plus the spare channels, `cohop.planning.headroom`).
   More channels mean a lower density on each, which is what a system that
   knows nothing of its neighbours' plans can do for them. If avoiding leaves
   fewer than its minimum, it takes back the least occupied avoided channels,
   ties together (so a band occupied evenly is used whole).
4. Its hop order is its own: a seeded pseudo-random order of its own hop set
   (seeded by the request's seed and the system's id), spaced like every
   order (`cohop.sequences.construct.CommonRelabelling` with one member);
   no family is shared between systems.

Nothing here knows another system's plan except what its receivers would
measure; the joint plan (planned as usual, on the same deadline) is shown
beside it so the user sees what lawful independence costs.
"""

from __future__ import annotations

import random
from dataclasses import dataclass, field, replace

import numpy as np

from cohop.assess import assess_site, channel_prefix_counts, system_collisions
from cohop.deadline import Deadline
from cohop.errors import Conflict, PlanInfeasible
from cohop.planning import costs
from cohop.planning.engine import (FEASIBLE, NO_PLAN, PlanResult, SolverReport, SolveSettings, evaluated_objective,
                                   plan_site, request_deadline, search_budget)
from cohop.planning.instance import PlanningInstance, build_instance, runs, without_inter_system_terms
from cohop.planning.linear import objective_value, system_estimates
from cohop.planning.requirements import PlanRequirements
from cohop.planning.take_back import spaced, taken_back
from cohop.planning.validate import validate_plan
from cohop.prepare import PreparedSite
from cohop.sequences.construct import RESPACE_WORK, CommonRelabelling, Sequence, required_spacing_channels
from cohop.sequences.report import SequenceOutcome, delay_spread, outcome, sequence_work
from cohop.stats import hopping


@dataclass(frozen=True)
class SystemChoice:
    """What one system observed when it was commissioned and what it chose."""

    system: str
    position: int  # in the commissioning order, 0 first
    may_use: int  # channels allowed to it (band, profile, interferers, its own exclusions)
    avoided_occupancy: tuple[tuple[int, int], ...]  # channel runs avoided for earlier systems' occupancy
    occupied_by: tuple[str, ...]  # the earlier systems whose occupancy it avoided
    taken_back: int  # avoided channels taken back to reach its minimum
    channel_count: int
    limited_by: str | None  # None (every channel it may use), "max_channels" or "separation"


@dataclass
class IndependentPlanResult(PlanResult):
    """An independent plan (`PlanResult` fields), how each system chose, and the joint plan beside it."""

    commissioning_order: tuple[str, ...] = ()
    basis: str = "occupancy"
    choices: tuple[SystemChoice, ...] = ()
    joint: PlanResult | None = None  # None when no joint plan was found (see joint_note)
    joint_note: str | None = None
    uniform: object = None  # the independent hop sets assessed like the joint plan (no orders), for the comparison


def commissioning_order(ids: list[str], stated: tuple[str, ...]) -> list[int]:
    """Indices of the systems in commissioning order: those stated first, then the rest in site order."""
    index = {sid: v for v, sid in enumerate(ids)}
    first = [index[sid] for sid in stated if sid in index]
    return first + [v for v in range(len(ids)) if v not in first]


def _select(free: np.ndarray, pins: np.ndarray, exposure: np.ndarray, sep: int, hi: int) -> list[int]:
    """The pins and as many of `free` as fit (at `sep` steps, at most `hi` in all), least exposed first."""
    by_exposure = free[np.argsort(exposure[free], kind="stable")]
    chosen = spaced(by_exposure, sep, pins)
    widest = spaced(free, sep, pins)  # along the grid: the most channels at this separation
    if len(widest) > len(chosen):
        chosen = widest
    rest = sorted((c for c in chosen if c not in set(pins.tolist())), key=lambda c: (exposure[c], c))
    return sorted(pins.tolist() + rest[:max(0, hi - pins.size)])


def occupancy_seen(prep: PreparedSite, v: int, hop_sets: list[np.ndarray | None]) -> np.ndarray:
    """(S, C): each system on air's predicted per-hop hit probability on v, on every grid channel of v
    (the uniform model of `cohop.assess`; zero for systems not yet on air)."""
    sets = [np.zeros(0, dtype=int) if h is None else h for h in hop_sets]
    sizes = np.array([s.size for s in sets])
    return system_collisions(prep, v, np.arange(prep.n_channels), channel_prefix_counts(prep, sets), sizes)


def choose_hop_set(inst: PlanningInstance, v: int, hop_sets: list[np.ndarray | None], basis: str,
                   position: int) -> tuple[np.ndarray, SystemChoice]:
    """System v's own hop set given what is already on air (`hop_sets`, None for systems not yet on air)."""
    prep, req = inst.prep, inst.req
    sid = inst.ids[v]
    r = req.for_system(sid)
    allowed = inst.allowed[v] | inst.pinned[v]
    pins = np.flatnonzero(inst.pinned[v])
    seen = occupancy_seen(prep, v, hop_sets)
    occupancy = 1.0 - np.prod(1.0 - seen, axis=0)
    exposure = 1.0 - (1.0 - inst.interferer_cost[v]) * (1.0 - occupancy)
    avoid = np.zeros_like(allowed)
    if basis == "occupancy":
        avoid = (seen > req.interferer_threshold).any(axis=0) & allowed & ~inst.pinned[v]
    sep = int(inst.separation[v])
    lo = int(inst.min_size[v])
    hi = r.max_channels if r.max_channels is not None else prep.n_channels
    free = np.flatnonzero(allowed & ~avoid)
    back = taken_back(free, np.flatnonzero(avoid), occupancy, lo, sep, pins)  # too few left: the least occupied
    free = np.union1d(free, back)
    chosen = _select(free, pins, exposure, sep, hi)
    limited = None if len(chosen) >= np.union1d(free, pins).size else \
        "max_channels" if len(chosen) >= hi else "separation"
    heard = (seen > req.interferer_threshold) & (allowed & ~inst.pinned[v])[None, :]
    others = [inst.ids[a] for a in range(inst.n_systems) if a != v and heard[a].any()]
    hs = np.array(sorted(chosen), dtype=int)
    return hs, SystemChoice(sid, position, int(allowed.sum()), tuple(runs(np.flatnonzero(avoid))),
                            tuple(others) if basis == "occupancy" else (), int(back.size), int(hs.size), limited)


def choose_hop_sets(inst: PlanningInstance, order: list[int], basis: str):
    """Every system's own hop set, in commissioning order; (hop sets, choices in that order)."""
    sets: list[np.ndarray | None] = [None] * inst.n_systems
    choices = []
    for position, v in enumerate(order):
        sets[v], choice = choose_hop_set(inst, v, sets, basis, position)
        choices.append(choice)
    return sets, choices


def _enough(inst: PlanningInstance, hop_sets) -> None:
    """PlanInfeasible when a system cannot hold its minimum even taking back every avoided channel."""
    short = [Conflict("channel count", (sid,), f"{sid} may use only {hs.size} channel(s) (band, profile, "
                      f"interferers, its exclusions), fewer than its minimum {inst.min_size[v]}",
                      relax="relax its exclusions, the interferer threshold, its spare channels or its count")
             for v, (sid, hs) in enumerate(zip(inst.ids, hop_sets)) if hs.size < inst.min_size[v]]
    if short:
        raise PlanInfeasible(short)


def own_orders(prep: PreparedSite, hop_sets, seed: int) -> tuple[list[Sequence], list[str]]:
    """Each system's own hop order: a pseudo-random order of its hop set seeded by `seed` and its id,
    spaced by the coherence bandwidth where its set allows; no family shared with any other system."""
    spacing = required_spacing_channels(prep, delay_spread(prep))
    out, short = [], []
    for v, system in enumerate(prep.site.systems):
        hs = np.unique(np.asarray(hop_sets[v], dtype=int))
        p = hopping.prime_at_least(max(2, hs.size))
        rng = random.Random(f"{seed}:{system.id}:own order")
        order = CommonRelabelling(hs, rng.sample(range(p), hs.size), p, [hs], [1], spacing)
        order.repair(rng, RESPACE_WORK)
        if hs.size > 1 and order.min_gap(0) < order.aim[0]:
            short.append(system.id)
        out.append(Sequence(system=v, channels=order.order(0), construction="own order", component=v, prime=p,
                            member=1, required_spacing=spacing))
    notes = [f"{', '.join(short)}: consecutive hops closer than the {spacing}-channel spacing asked for in "
             "places; see each order's closest step"] if short else []
    return out, notes


def own_instance(full: PlanningInstance) -> PlanningInstance:
    """The instance an independent plan is checked against: no inter-system terms or guards (nothing is
    coordinated), and counts from the minimum up to max_channels (or the grid)."""
    own = without_inter_system_terms(full)
    own.max_size = np.array([full.req.for_system(sid).max_channels or full.n_channels for sid in full.ids])
    return own


def _joint(prep, req, settings, progress, deadline, budget) -> tuple[PlanResult | None, str | None]:
    try:
        return plan_site(prep, replace(req, coordination="joint"), settings, progress, detail="system",
                         with_sequences=False, deadline=deadline, budget=budget), None
    except PlanInfeasible as err:
        return None, "no joint plan to compare with: " + "; ".join(c.detail for c in err.conflicts)[:500]


def plan_independent(prep: PreparedSite, req: PlanRequirements, settings: SolveSettings = SolveSettings(),
                     progress=None, detail: str = "channel", with_sequences: bool = True,
                     deadline: Deadline | None = None, budget=None) -> IndependentPlanResult:
    """The independent plan, its own orders, assessment and validation, and the joint plan beside it (on
    the search budget: the independent choice itself is a few array passes per system)."""
    deadline = deadline or (budget.deadline if budget is not None else
                            request_deadline(req, settings))
    full = build_instance(prep, req)
    order = commissioning_order(full.ids, req.commissioning_order)
    hop_sets, choices = choose_hop_sets(full, order, req.independent_basis)
    _enough(full, hop_sets)
    own = own_instance(full).with_sizes([h.size for h in hop_sets])
    seq_work = sequence_work(prep, own.sizes, req.sequence_packets, costs.SEQUENCE_SHARE * deadline.limit_s) \
        if with_sequences else None
    if budget is None:
        # the independent plan's closing phases, the joint plan's (no sequences) and the comparison's assessment
        after = (costs.after_search_s(own, detail, seq_work) + costs.after_search_s(full, "system", None)
                 + costs.SAFETY * costs.assessment_s(own.n_systems, int(own.sizes.sum()), costs.joint_cells(own)))
        budget = search_budget(deadline, full, after, settings.max_products)
    joint, joint_note = _joint(prep, req, settings, progress, deadline, budget)
    sequences = None
    if with_sequences:
        seqs, notes = own_orders(prep, hop_sets, req.seed)
        sequences = outcome(prep, seqs, notes, req.sequence_packets, req.seed, seq_work)
    assessment = assess_site(prep, hop_sets=hop_sets, detail=detail, origin="plan",
                             sequences=sequences.orders if sequences is not None else None)
    uniform = assess_site(prep, hop_sets=hop_sets, detail="system", origin="plan")
    violations = validate_plan(own, hop_sets, assessment)
    report = _report(full, own, hop_sets, assessment, joint, deadline, settings, req, choices, joint_note,
                     violations)
    return IndependentPlanResult(instance=own, hop_sets=hop_sets, assessment=assessment, report=report,
                                 baselines=joint.baselines if joint is not None else [], violations=violations,
                                 sequences=sequences, commissioning_order=tuple(full.ids[v] for v in order),
                                 basis=req.independent_basis, choices=tuple(choices), joint=joint,
                                 joint_note=joint_note, uniform=uniform)


def _report(full, own, hop_sets, assessment, joint, deadline, settings, req, choices, joint_note,
            violations) -> SolverReport:
    x = np.zeros_like(full.allowed)
    for v, hs in enumerate(hop_sets):
        x[v, hs] = True
    sized = full.with_sizes(own.sizes)
    objective = objective_value(sized, system_estimates(sized, x))
    evaluated = evaluated_objective(full, assessment)
    bound = min(joint.report.bound, objective) if joint is not None else 0.0
    notes = [f"independent coordination: each system chose its own hop set in commissioning order "
             f"({', '.join(c.system for c in choices)}), avoiding "
             + ("the fixed interferers and the occupancy of the systems already on air" if req.independent_basis
                == "occupancy" else "the fixed interferers only")
             + f" above {req.interferer_threshold:g} predicted hit probability; objective, bound and gap are "
             "on the joint planner's linearised objective, the bound being the joint plan's (no plan, joint or "
             "not, can do better)"]
    if joint_note:
        notes.append(joint_note)
    notes += deadline.notes()
    gap = 0.0 if objective <= 0 else max(0.0, (objective - bound) / objective)
    return SolverReport(status=NO_PLAN if violations else FEASIBLE, objective=objective, bound=bound, gap=gap,
                        time_s=deadline.elapsed(), time_limit_s=deadline.limit_s,
                        method="independent: each system in commissioning order, own hop set and own order",
                        bounds={} if joint is None else dict(joint.report.bounds), evaluated_objective=evaluated,
                        linearisation_error=objective - evaluated, scale_factor=1.0, rounding=0.0,
                        workers=settings.solver_threads, deterministic=settings.deterministic,
                        objective_kind=req.objective, requested_time_limit_s=deadline.requested_s,
                        stopped_by_wall_clock=deadline.stopped_by_wall_clock, work=dict(deadline.work_done),
                        binding=[], notes=notes)


# --- re-planning: each affected system re-adapts ---------------------------------

def _keeps(inst: PlanningInstance, v: int, current: np.ndarray, hop_sets, basis: str) -> bool:
    """Whether system v's current hop set still stands: every channel allowed (or pinned), none avoided for
    the occupancy of systems on air before it, its pins held, its count within [minimum, max_channels] and
    its separation kept."""
    if current.size == 0 or current.min() < 0 or current.max() >= inst.n_channels:
        return False
    if not (inst.allowed[v] | inst.pinned[v])[current].all():
        return False
    if not set(np.flatnonzero(inst.pinned[v]).tolist()) <= set(current.tolist()):
        return False
    if not inst.min_size[v] <= current.size <= inst.max_size[v]:
        return False
    if current.size > 1 and np.diff(current).min() < inst.separation[v]:
        return False
    if basis == "occupancy":
        seen = occupancy_seen(inst.prep, v, hop_sets)[:, current]
        if (seen > inst.req.interferer_threshold).any():
            return False
    return True


def replan_order(ids: list[str], stated: tuple[str, ...], current_ids) -> list[int]:
    """Re-plan order: the stated order first; then the systems already on air (site order), then new ones."""
    index = {sid: v for v, sid in enumerate(ids)}
    first = [index[sid] for sid in stated if sid in index]
    on_air = [v for v, sid in enumerate(ids) if sid in current_ids and v not in first]
    return first + on_air + [v for v in range(len(ids)) if v not in first and v not in on_air]


def replan_independent(prep: PreparedSite, req: PlanRequirements, current, mode, settings: SolveSettings =
                       SolveSettings(), deadline: Deadline | None = None, budget=None):
    """Independent re-plan: in commissioning order, a system whose current hop set still stands (`_keeps`)
    keeps it and its order; any other (and every new system) re-adapts as when it was commissioned
    (`choose_hop_set`). The fresh independent plan (with the joint plan beside it) is the reference. The
    re-plan's `mode` (tolerance or change budget) does not steer it: a system that re-adapts takes every
    channel it may use, and the answer counts the changes."""
    from cohop.planning.replan import ReplanResult, SystemDiff, lower_bound_changes

    deadline = deadline or (budget.deadline if budget is not None else
                            request_deadline(req, settings))
    cur = {c.system: c for c in current}
    full = build_instance(prep, req)
    ids = full.ids
    own = own_instance(full)
    seq_work = sequence_work(prep, own.max_size.clip(max=prep.n_channels), req.sequence_packets,
                             costs.SEQUENCE_SHARE * deadline.limit_s)
    if budget is None:
        budget = search_budget(deadline, full, costs.replan_after_search_s(full, seq_work)
                               + costs.after_search_s(full, "system", None))
    fresh = plan_independent(prep, replace(req, baselines=()), settings, detail="system", with_sequences=False,
                             deadline=deadline, budget=budget)
    order = replan_order(ids, req.commissioning_order, cur)
    sets: list[np.ndarray | None] = [None] * len(ids)
    kept = [False] * len(ids)
    for position, v in enumerate(order):
        c = cur.get(ids[v])
        now = np.unique(np.asarray(c.hop_set, dtype=int)) if c is not None else np.zeros(0, dtype=int)
        if c is not None and _keeps(own, v, now, sets, req.independent_basis):
            sets[v], kept[v] = now, True
        else:
            sets[v], _ = choose_hop_set(own, v, sets, req.independent_basis, position)
    _enough(full, sets)
    seqs, notes = own_orders(prep, sets, req.seed)
    changed = []
    for v, sid in enumerate(ids):
        c = cur.get(sid)
        keep = kept[v] and c is not None and c.sequence is not None and sorted(set(c.sequence)) == sets[v].tolist()
        if keep:
            seqs[v] = Sequence(system=v, channels=np.asarray(c.sequence), construction="kept", component=-1,
                               required_spacing=seqs[v].required_spacing)
        changed.append(not keep)
    sequences = outcome(prep, seqs, notes, req.sequence_packets, req.seed, seq_work)
    assessment = assess_site(prep, hop_sets=sets, origin="plan", sequences=sequences.orders)
    before_sets = [np.array(sorted(cur[sid].hop_set)) if sid in cur else sets[v] for v, sid in enumerate(ids)]
    before = assess_site(prep, hop_sets=before_sets, detail="system", origin="current")
    inst = own.with_sizes([h.size for h in sets])
    old = np.zeros_like(full.allowed)
    x = np.zeros_like(full.allowed)
    for v, sid in enumerate(ids):
        x[v, sets[v]] = True
        if sid in cur:
            old[v, [ch for ch in cur[sid].hop_set if 0 <= ch < prep.n_channels]] = True
    existing = np.array([sid in cur for sid in ids])
    diffs = []
    for v, sid in enumerate(ids):
        if sid not in cur:
            diffs.append(SystemDiff(sid, "new system", [], sets[v].tolist(), True))
            continue
        dropped = sorted(set(np.flatnonzero(old[v]).tolist()) - set(sets[v].tolist()))
        added = sorted(set(sets[v].tolist()) - set(np.flatnonzero(old[v]).tolist()))
        diffs.append(SystemDiff(sid, "changed" if added or dropped else "kept", dropped, added, changed[v]))
    changes = int((x & ~old)[existing].sum())
    lower = lower_bound_changes(inst.with_sizes(np.where(existing, old.sum(axis=1), inst.sizes).clip(
        inst.min_size, inst.max_size)), old, existing)
    sized = full.with_sizes(inst.sizes)
    notes = [f"independent re-plan: in commissioning order ({', '.join(ids[v] for v in order)}) each system "
             "kept its hop set while it still stood (allowed, no occupancy above the threshold from systems "
             "before it, its count and pins kept) and otherwise re-adapted, taking every channel it may use; "
             "the mode's tolerance or change budget does not steer an independent re-plan"]
    notes += deadline.notes()
    return ReplanResult(instance=inst, hop_sets=sets, assessment=assessment, before=before, fresh=fresh,
                        sequences=sequences, diffs=diffs, changes=changes, lower_bound=min(lower, changes),
                        proven_minimal=changes <= lower, objective=objective_value(sized, system_estimates(sized, x)),
                        target=None, removed=sorted(set(cur) - set(ids)),
                        violations=validate_plan(own, sets, assessment), notes=notes, time_s=deadline.elapsed(),
                        time_limit_s=deadline.limit_s, requested_time_limit_s=deadline.requested_s,
                        stopped_by_wall_clock=deadline.stopped_by_wall_clock, work=dict(deadline.work_done))
