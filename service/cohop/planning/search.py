"""Greedy construction and local search on the linearised objective.

Both keep every hard requirement but the loss ceilings: allowed channels,
pins, exact channel counts, each system's separation, and guards. They are
deterministic: ties go to the lowest index.
"""

from __future__ import annotations

import random

import numpy as np

from cohop.planning.instance import PlanningInstance
from cohop.planning.linear import MarginalTable, objective_value, system_estimates


class Placement:
    """Channels held by every system, with the masks that say what each may still take."""

    def __init__(self, inst: PlanningInstance, x: np.ndarray, weights: np.ndarray | None = None):
        self.inst = inst
        self.x = np.zeros_like(inst.allowed)
        self.table = MarginalTable(inst, self.x, weights)
        self.own = np.zeros(inst.allowed.shape, dtype=np.int32)  # own channels closer than the separation
        self.guarded = np.zeros(inst.allowed.shape, dtype=np.int32)  # guarded partners' channels within the guard
        self.partners: dict[int, list[tuple[int, int]]] = {}
        for v, a, w in inst.guards:
            self.partners.setdefault(v, []).append((a, w))
            self.partners.setdefault(a, []).append((v, w))
        for v, c in zip(*np.nonzero(x)):
            self.add(int(v), int(c))

    def _bump(self, arr: np.ndarray, row: int, c: int, w: int, sign: int) -> None:
        arr[row, max(0, c - w):min(arr.shape[1], c + w + 1)] += sign

    def add(self, v: int, c: int) -> None:
        self.x[v, c] = True
        self.table.shift(v, c, +1)
        self._bump(self.own, v, c, int(self.inst.separation[v]) - 1, +1)
        for a, w in self.partners.get(v, ()):
            self._bump(self.guarded, a, c, w, +1)

    def remove(self, v: int, c: int) -> None:
        self.x[v, c] = False
        self.table.shift(v, c, -1)
        self._bump(self.own, v, c, int(self.inst.separation[v]) - 1, -1)
        for a, w in self.partners.get(v, ()):
            self._bump(self.guarded, a, c, w, -1)

    def open_channels(self, v: int) -> np.ndarray:
        """Channels v could add now (boolean over the grid)."""
        return self.inst.allowed[v] & (self.own[v] == 0) & (self.guarded[v] == 0)


def greedy(inst: PlanningInstance, weights: np.ndarray | None = None,
           prefer: np.ndarray | None = None) -> np.ndarray | None:
    """Hand out the least harmful open channel, one at a time, to the system needing most. With `prefer` (an
    occupancy, e.g. a relaxation's plan whose counts are off), a system takes its least harmful preferred open
    channel while it has one: the guide's channels are kept where the counts allow and topped up greedily."""
    place = Placement(inst, np.zeros_like(inst.allowed), weights)
    for v, c in zip(*np.nonzero(inst.pinned)):
        if not place.open_channels(int(v))[c]:
            return None
        place.add(int(v), int(c))
    need = inst.sizes - inst.pinned.sum(axis=1)
    while need.max() > 0:
        v = int(np.argmax(need))
        ok = place.open_channels(v)
        if not ok.any():
            return None
        if prefer is not None and (ok & prefer[v]).any():
            ok = ok & prefer[v]
        c = int(np.argmin(np.where(ok, place.table.m[v], np.inf)))
        place.add(v, c)
        need[v] -= 1
    return place.x.copy()


def best_swap(place: Placement, v: int, leaving: np.ndarray | None = None) -> tuple[float, int, int]:
    """(delta, c_out, c_in) of v's best swap; only channels in `leaving` (boolean over the grid) may go."""
    inst = place.inst
    m = place.table.m[v]
    held = np.flatnonzero(place.x[v] & ~inst.pinned[v] & (True if leaving is None else leaving))
    if held.size == 0:
        return 0.0, -1, -1
    base = inst.allowed[v] & (place.guarded[v] == 0) & ~place.x[v]
    sep = int(inst.separation[v])
    if sep <= 1:
        ok = base & (place.own[v] == 0)
        if not ok.any():
            return 0.0, -1, -1
        c_in = int(np.argmin(np.where(ok, m, np.inf)))
        c_out = int(held[np.argmax(m[held])])
        return float(m[c_in] - m[c_out]), c_out, c_in
    grid = np.arange(inst.n_channels)
    near = np.abs(grid[None, :] - held[:, None]) < sep
    ok = base[None, :] & ((place.own[v] == 0)[None, :] | ((place.own[v] == 1)[None, :] & near))
    delta = np.where(ok, m[None, :] - m[held][:, None], np.inf)
    i, c_in = np.unravel_index(int(np.argmin(delta)), delta.shape)
    return float(delta[i, c_in]), int(held[i]), int(c_in)


def _descend(place: Placement, journal: list | None = None, max_moves: int = 100_000) -> float:
    """Best swap per system until none improves; returns the change of the (weighted) objective."""
    scale = max(float(np.abs(place.table.m).max()), 1e-300)
    total, moves = 0.0, 0
    while moves < max_moves:
        moved = False
        for v in range(place.inst.n_systems):
            delta, c_out, c_in = best_swap(place, v)
            if c_out >= 0 and delta < -1e-12 * scale:
                place.remove(v, c_out)
                place.add(v, c_in)
                total += delta
                moves += 1
                moved = True
                if journal is not None:
                    journal.append((v, c_out, c_in))
        if not moved:
            break
    return total


def improve(inst: PlanningInstance, x: np.ndarray, weights: np.ndarray | None = None) -> np.ndarray:
    """Best-swap local search per system until no swap improves."""
    place = Placement(inst, x, weights)
    _descend(place)
    return place.x.copy()


def _kick(place: Placement, rng: random.Random, systems: int, share: float, journal: list) -> float:
    """Move a share of the channels of a few random systems to random open channels."""
    inst = place.inst
    total = 0.0
    for v in rng.sample(range(inst.n_systems), min(systems, inst.n_systems)):
        held = [int(c) for c in np.flatnonzero(place.x[v] & ~inst.pinned[v])]
        for c_out in rng.sample(held, max(1, int(share * len(held)))) if held else []:
            place.remove(v, c_out)
            open_ = np.flatnonzero(place.open_channels(v) & ~place.x[v])
            c_in = int(open_[rng.randrange(open_.size)]) if open_.size else c_out
            place.add(v, c_in)
            total += place.table.m[v, c_in] - place.table.m[v, c_out]
            journal.append((v, c_out, c_in))
    return total


def _undo(place: Placement, journal: list) -> None:
    for v, c_out, c_in in reversed(journal):
        place.remove(v, c_in)
        place.add(v, c_out)


def iterated(inst: PlanningInstance, x: np.ndarray, kicks: int, seed: int, weights: np.ndarray | None = None,
             progress=None, stop=None, counter=None, target: float | None = None) -> np.ndarray:
    """Iterated local search: kick, descend, keep if not worse, else undo. Deterministic for a seed
    (`stop()`, the wall clock's stop, ends it early and then it is not). It ends as soon as the (weighted)
    objective reaches `target` (a proven bound: nothing better exists). `counter.count("kicks", n)`
    receives the number of kicks made."""
    place = Placement(inst, x, weights)
    _descend(place)
    rng = random.Random(seed)
    w = inst.weights if weights is None else weights
    current = float(w @ system_estimates(inst, place.x))
    best, best_x = current, place.x.copy()
    done = 0
    for k in range(kicks):
        if target is not None and best <= target:
            break
        if stop is not None and stop():
            break
        done += 1
        journal: list = []
        change = _kick(place, rng, 3, 0.1, journal)
        change += _descend(place, journal)
        if change <= 1e-15 * max(1.0, abs(current)):
            current += change
            if current < best - 1e-15:
                best, best_x = current, place.x.copy()
                if progress:
                    progress(k, best)
        else:
            _undo(place, journal)
    if counter is not None:
        counter.count("kicks", done)
    return best_x


def kick_budget(inst: PlanningInstance, seconds: float) -> int:
    """Kicks for about `seconds` of search, at least 20: a count, so runs stay deterministic.
    Calibrated on our 2-core machines: a kick and its descent cost about 0.2 ms per system plus 13 us
    per channel held by the systems (measured 0.5 to 0.75 ms on 3 systems holding 7 channels, 1.2 to
    4.6 ms on the samples, 9 to 11 ms on the medium bench site and 23 to 38 ms on the large one;
    `bench/bench_timelimits.py --phases` prints it)."""
    per_kick = 2e-4 * inst.n_systems + 1.3e-5 * float(inst.sizes.sum())
    return max(20, int(seconds / per_kick))


def search_plan(inst: PlanningInstance, x: np.ndarray, seconds: float, progress=None, stop=None,
                counter=None, target: float | None = None) -> np.ndarray:
    """Local search then iterated local search on the request's objective.

    For the worst system: start from the weighted-sum plan (half the budget), then rounds of search on
    weights that grow multiplicatively for the systems near the maximum, keeping the best maximum.
    """
    kicks = kick_budget(inst, seconds)
    if inst.req.objective != "worst_system":
        return iterated(inst, improve(inst, x), kicks, inst.req.seed, progress=progress, stop=stop, counter=counter,
                        target=target)
    best = iterated(inst, improve(inst, x), kicks // 2, inst.req.seed, stop=stop, counter=counter)
    best_value = objective_value(inst, system_estimates(inst, best))
    weights = np.ones(inst.n_systems)
    current = best
    rounds = 6
    for r in range(rounds):
        est = system_estimates(inst, current)
        weights = weights * np.exp(2.0 * (est / max(float(est.max()), 1e-300) - 1.0))
        weights = weights / weights.max()
        current = iterated(inst, current, max(5, kicks // (2 * rounds)), inst.req.seed + 1 + r, weights, stop=stop,
                           counter=counter)
        value = objective_value(inst, system_estimates(inst, current))
        if value < best_value:
            best, best_value = current, value
    return best


def improve_worst(inst: PlanningInstance, x: np.ndarray, rounds: int = 12) -> np.ndarray:
    """Min-max: local search on the weighted sum with weights that grow with each system's estimate."""
    best = x
    best_value = objective_value(inst, system_estimates(inst, x))
    current = x
    for _ in range(rounds):
        est = system_estimates(inst, current)
        top = max(float(est.max()), 1e-300)
        weights = np.exp(8.0 * (est / top - 1.0))
        current = improve(inst, current, weights)
        value = objective_value(inst, system_estimates(inst, current))
        if value < best_value - 1e-15:
            best, best_value = current, value
    return best


def from_relaxation(inst: PlanningInstance, paths: list[np.ndarray], stop=None) -> np.ndarray | None:
    """The best plan made from relaxed plans (occupancies whose counts are off): each repaired to the exact
    counts by the guided greedy (`greedy(prefer=...)`), then improved by best swaps; None if none repairs.
    `stop()` (the wall clock) is asked before each path after the first."""
    best, best_value = None, np.inf
    for i, path in enumerate(paths):
        if i and stop is not None and stop():
            break
        x = greedy(inst, prefer=np.asarray(path, dtype=bool))
        if x is None:
            continue
        x = polish(inst, x)
        value = objective_value(inst, system_estimates(inst, x))
        if value < best_value:
            best, best_value = x, value
    return best


def polish(inst: PlanningInstance, x: np.ndarray) -> np.ndarray:
    return improve_worst(inst, x) if inst.req.objective == "worst_system" else improve(inst, x)
