"""Solver-free validator: checks a plan against every hard requirement.

It recomputes what it needs from the prepared site and the requirements
(not from solver variables, nor from the instance's masks): grid, channel
counts, band fit, exclusions, pins, separation and the whole profile via
`check_compliance`, guards, and loss ceilings on the evaluated figures.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from cohop.assess import Assessment, interferer_collisions
from cohop.planning.instance import PlanningInstance
from cohop.regulatory import check_compliance
from cohop.regulatory.rules import FAIL


@dataclass(frozen=True)
class Violation:
    requirement: str
    systems: tuple[str, ...]
    detail: str


def _system_violations(inst: PlanningInstance, v: int, hs: np.ndarray) -> list[Violation]:
    prep, req = inst.prep, inst.req
    sid = prep.site.systems[v].id
    r = req.for_system(sid)
    out = []

    def bad(what, detail):
        out.append(Violation(what, (sid,), detail))

    if hs.size == 0:
        return [Violation("channel count", (sid,), "empty hop set")]
    if hs.min() < 0 or hs.max() >= prep.n_channels or np.unique(hs).size != hs.size:
        return [Violation("grid", (sid,), "channels off the grid or repeated")]
    if not (inst.min_size[v] <= hs.size <= inst.max_size[v]):
        bad("channel count", f"{hs.size} channels, required {inst.min_size[v]}-{inst.max_size[v]}")
    if not prep.usable[v, hs].all():
        bad("band fit", f"channels {hs[~prep.usable[v, hs]].tolist()} do not fit the band")
    itf = interferer_collisions(prep, v, hs)
    pinned = np.isin(hs, np.array(r.pinned_channels, dtype=int))  # a pin overrides an interferer exclusion
    back = [c for lo, hi in inst.taken_back.get(v, []) for c in range(lo, hi + 1)]
    pinned |= np.isin(hs, np.array(back, dtype=int))  # so does a channel taken back to reach the count
    for k, row in enumerate(itf):
        over = hs[(row > req.interferer_threshold) & ~pinned]
        if over.size:
            bad("interferer exclusion", f"channels {over.tolist()} are hit by {prep.site.interferers[k].id} more "
                                        f"than {req.interferer_threshold:g} of the time")
    excluded = set(r.excluded_channels) & set(hs.tolist())
    if excluded:
        bad("explicit exclusion", f"uses excluded channels {sorted(excluded)}")
    missing = set(r.pinned_channels) - set(hs.tolist())
    if missing:
        bad("pinned channels", f"misses pinned channels {sorted(missing)}")
    if hs.size > 1 and np.diff(np.sort(hs)).min() < inst.separation[v]:
        bad("separation", f"two channels closer than {inst.separation[v]} grid steps")
    for f in check_compliance(prep.profile, prep.site.systems[v], hs, prep.centres_hz[hs], prep.band):
        if f.status == FAIL:
            bad("profile rule", f"{f.rule.title}: {f.message} [{f.rule.citation}]")
    return out


def _guard_violations(inst: PlanningInstance, hop_sets) -> list[Violation]:
    out = []
    ids = inst.ids
    for v, a, w in inst.guards:
        d = np.abs(hop_sets[v][:, None] - hop_sets[a][None, :])
        if d.size and d.min() <= w:
            out.append(Violation("guard", (ids[v], ids[a]), f"channels within {w} grid steps of each other"))
    return out


def _ceiling_violations(inst: PlanningInstance, assessment: Assessment) -> list[Violation]:
    out = []
    for f in assessment.systems:
        r = inst.req.for_system(f.id)
        if r.max_attempt_loss is not None and f.attempt_loss_probability > r.max_attempt_loss * (1 + 1e-9):
            out.append(Violation("loss ceiling", (f.id,), f"per-attempt loss {f.attempt_loss_probability:.4g} above "
                                                          f"{r.max_attempt_loss:g}"))
        if r.max_residual_loss is not None and f.residual_loss_probability > r.max_residual_loss * (1 + 1e-9):
            out.append(Violation("loss ceiling", (f.id,), f"residual loss {f.residual_loss_probability:.4g} above "
                                                          f"{r.max_residual_loss:g}"))
    return out


def validate_plan(inst: PlanningInstance, hop_sets, assessment: Assessment | None = None) -> list[Violation]:
    """Every violated hard requirement; empty when the plan meets them all.

    `assessment` (the evaluation of these hop sets) is needed for the loss ceilings.
    """
    sets = [np.sort(np.asarray(h, dtype=int)) for h in hop_sets]
    out = []
    for v, hs in enumerate(sets):
        out += _system_violations(inst, v, hs)
    out += _guard_violations(inst, sets)
    if assessment is not None:
        out += _ceiling_violations(inst, assessment)
    return out
