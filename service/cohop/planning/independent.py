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
from cohop.errors import PlanInfeasible
from cohop.planning import costs
from cohop.planning.engine import (FEASIBLE, NO_PLAN, PlanResult, SolverReport, SolveSettings, evaluated_objective,
                                   plan_site, search_budget)
from cohop.planning.instance import PlanningInstance, build_instance, runs, without_inter_system_terms
from cohop.planning.linear import objective_value, system_estimates
from cohop.planning.requirements import PlanRequirements
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


def _spaced(chans, separation: int, keep=()) -> list[int]:
    """`keep`, then channels of `chans` in the order given that stay `separation` steps from all taken."""
    taken = sorted(int(c) for c in keep)
    for c in chans:
        c = int(c)
        if c in taken:
            continue
        if all(abs(c - t) >= separation for t in taken):
            taken.append(c)
    return taken


def _select(free: np.ndarray, pins: np.ndarray, exposure: np.ndarray, sep: int, hi: int) -> list[int]:
    """The pins and as many of `free` as fit (at `sep` steps, at most `hi` in all), least exposed first."""
    by_exposure = free[np.argsort(exposure[free], kind="stable")]
    chosen = _spaced(by_exposure, sep, pins)
    widest = _spaced(free, sep, pins)  # along the grid: the most channels at this separation
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
    taken_back = 0
    if len(_spaced(free, sep, pins)) < lo and avoid.any():
        back = np.flatnonzero(avoid)
        back = back[np.argsort(occupancy[back], kind="stable")]
        for k in range(1, back.size + 1):  # the fewest least-occupied channels that reach the minimum
            if len(_spaced(np.concatenate([free, back[:k]]), sep, pins)) >= lo:
                level = occupancy[back[k - 1]]
                back = back[occupancy[back] <= level * (1 + 1e-9) + 1e-15]  # ties go together
                break
        free = np.union1d(free, back)
        taken_back = int(back.size)
    chosen = _select(free, pins, exposure, sep, hi)
    limited = None if len(chosen) >= np.union1d(free, pins).size else \
        "max_channels" if len(chosen) >= hi else "separation"
    others = [inst.ids[a] for a in range(inst.n_systems) if (seen[a] > req.interferer_threshold).any() and a != v]
    hs = np.array(sorted(chosen), dtype=int)
    return hs, SystemChoice(sid, position, int(allowed.sum()), tuple(runs(np.flatnonzero(avoid))),
                            tuple(others) if basis == "occupancy" else (), taken_back, int(hs.size), limited)


def choose_hop_sets(inst: PlanningInstance, order: list[int], basis: str):
    """Every system's own hop set, in commissioning order; (hop sets, choices in that order)."""
    sets: list[np.ndarray | None] = [None] * inst.n_systems
    choices = []
    for position, v in enumerate(order):
        sets[v], choice = choose_hop_set(inst, v, sets, basis, position)
        choices.append(choice)
    return sets, choices


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
                            Deadline.of(req.time_limit_s, settings.max_solve_s))
    full = build_instance(prep, req)
    order = commissioning_order(full.ids, req.commissioning_order)
    hop_sets, choices = choose_hop_sets(full, order, req.independent_basis)
    own = own_instance(full).with_sizes([h.size for h in hop_sets])
    seq_work = sequence_work(prep, own.sizes, req.sequence_packets, costs.SEQUENCE_SHARE * deadline.limit_s) \
        if with_sequences else None
    if budget is None:
        after = costs.after_search_s(own, detail, seq_work) + costs.after_search_s(full, "system", None)
        budget = search_budget(deadline, full, after)
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
