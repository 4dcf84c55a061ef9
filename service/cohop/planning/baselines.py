"""What a practitioner would do without a planner (common practice).

Each baseline returns one hop set per system. They use each system's allowed
channels (usable, not excluded) and channel count where that makes sense, but
make no attempt at the other requirements: the validator reports what they
miss. "whole_band" gives every system every usable channel (no plan).
"""

from __future__ import annotations

import random

import numpy as np

from cohop.planning.instance import PlanningInstance
from cohop.planning.search import greedy


def whole_band(inst: PlanningInstance) -> list[np.ndarray]:
    return [np.flatnonzero(inst.prep.usable[v]) for v in range(inst.n_systems)]


def _take(candidates: list[int], pinned: np.ndarray, size: int) -> np.ndarray:
    chosen = list(np.flatnonzero(pinned))
    for c in candidates:
        if len(chosen) >= size:
            break
        if c not in chosen:
            chosen.append(c)
    return np.array(sorted(chosen), dtype=int)


def independent_random(inst: PlanningInstance) -> list[np.ndarray]:
    """Each system draws its channels at random on its own (seeded by the request)."""
    out = []
    for v in range(inst.n_systems):
        rng = random.Random(f"{inst.req.seed}:{inst.ids[v]}")
        pool = list(np.flatnonzero(inst.allowed[v]))
        rng.shuffle(pool)
        out.append(_take(pool, inst.pinned[v], int(inst.sizes[v])))
    return out


def contiguous(inst: PlanningInstance) -> list[np.ndarray]:
    """Consecutive blocks, one per system in site order, wrapping round the band."""
    out, start = [], 0
    c = inst.n_channels
    for v in range(inst.n_systems):
        order = [(start + i) % c for i in range(c)]
        pool = [ch for ch in order if inst.allowed[v, ch]]
        out.append(_take(pool, inst.pinned[v], int(inst.sizes[v])))
        start = (start + int(inst.sizes[v])) % c
    return out


def interleaved(inst: PlanningInstance) -> list[np.ndarray]:
    """System i takes channels i, i + S, i + 2S, ..., then the next free channels after those."""
    s, c = inst.n_systems, inst.n_channels
    out = []
    for v in range(s):
        first = [ch for ch in range(v, c, s) if inst.allowed[v, ch]]
        rest = [ch for k in range(1, s) for ch in range((v + k) % s, c, s) if inst.allowed[v, ch]]
        out.append(_take(first + rest, inst.pinned[v], int(inst.sizes[v])))
    return out


def greedy_baseline(inst: PlanningInstance) -> list[np.ndarray] | None:
    x = greedy(inst)
    return None if x is None else [np.flatnonzero(row) for row in x]


BASELINE_BUILDERS = {
    "whole_band": whole_band,
    "random": independent_random,
    "contiguous": contiguous,
    "interleaved": interleaved,
    "greedy": greedy_baseline,
}
