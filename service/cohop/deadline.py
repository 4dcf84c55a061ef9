"""One solve's time limit, created once and handed to every phase.

The `Deadline` is made when the request's effective limit is known: the
request's `time_limit_s`, clamped by the server's cap (`COHOP_MAX_SOLVE_S`),
counted from when the request arrived. Its clock is `time.monotonic()`,
which on Linux is one system-wide clock, so a deadline made in the web
worker holds unchanged in the solver process it is pickled into.

A phase gets two things from a `Budget` (the search's share of the limit):

- *work*: a deterministic budget in "calibrated seconds" (`work(share)`),
  which the phase turns into a count (kicks, CP-SAT deterministic time,
  pricing operations). Counts make the same request and seed give the same
  plan, whatever the machine's load.
- *a wall-clock stop* (`stopper(phase)`, `left()`): the end of the search
  window. Only a phase that reaches it is cut short; the cut is recorded
  (`Deadline.stops`), because the plan may then differ between runs, and the
  answer says so.

The window ends where the closing phases' reserve begins. On a busy machine
everything runs slower than calibrated, the closing phases too, so the search
measures how fast its own calibrated work really runs (`observe`) and moves
the end earlier by the same factor applied to the reserve. Only the wall
clock's stop moves; the work budgets (and so the plan, when no stop
intervenes) stay as they were.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Callable

#: Who hears a solve's expected end (`Deadline.expect`): in a solver process, the parent that would
#: otherwise kill it at the request's hard cap (`cohop.isolation`). None in-process.
_expected_end_listener: Callable[[float], None] | None = None
#: Observations of less work than this say little about the machine's speed.
MIN_OBSERVED_WORK_S = 0.05


def listen_for_expected_end(listener: Callable[[float], None] | None) -> None:
    global _expected_end_listener
    _expected_end_listener = listener


@dataclass
class Deadline:
    requested_s: float  # the request's time limit
    limit_s: float  # the effective limit: min(requested, server cap)
    started: float = field(default_factory=time.monotonic)  # when the request arrived (time.monotonic)
    stops: list[str] = field(default_factory=list)  # phases the wall clock cut short, in order
    work_done: dict[str, float] = field(default_factory=dict)  # counts of work, by kind (for the report)
    work_speed: float = 1.0  # calibrated seconds of work per wall second on this machine (cohop.planning.calibration)
    #: the same for a search that will not run CP-SAT (0: work_speed; `calibration.speed_without_cp_sat`)
    speed_without_cp_sat: float = 0.0

    @classmethod
    def of(cls, requested_s: float, cap_s: float, started: float | None = None,
           work_speed: float = 1.0) -> "Deadline":
        return cls(requested_s=float(requested_s), limit_s=float(min(requested_s, cap_s)),
                   started=time.monotonic() if started is None else float(started), work_speed=float(work_speed))

    @property
    def clamped(self) -> bool:
        return self.requested_s > self.limit_s

    @property
    def end(self) -> float:
        return self.started + self.limit_s

    def elapsed(self) -> float:
        return time.monotonic() - self.started

    def remaining(self) -> float:
        return max(0.0, self.end - time.monotonic())

    def record_stop(self, phase: str) -> None:
        if phase not in self.stops:
            self.stops.append(phase)

    def count(self, kind: str, amount: float) -> None:
        self.work_done[kind] = self.work_done.get(kind, 0) + amount

    @property
    def stopped_by_wall_clock(self) -> bool:
        return bool(self.stops)

    def expect(self, end: float) -> None:
        """The planner expects to answer at `end` (time.monotonic()): after the limit when the closing phases
        alone cost more than it (a very large site). Whoever enforces a hard cap is told."""
        if _expected_end_listener is not None:
            _expected_end_listener(end)

    def budget(self, seconds: float, end: float, reserve_s: float = 0.0, speed: float | None = None) -> "Budget":
        """A budget of `seconds` of calibrated work that the wall clock stops at `end` (monotonic), leaving
        `reserve_s` (calibrated) for the closing phases; `speed` the work speed it was counted at (the
        deadline's by default)."""
        return Budget(seconds=max(0.0, seconds), end=min(end, self.end), deadline=self, reserve_s=reserve_s,
                      speed=self.work_speed if speed is None else float(speed))

    def notes(self) -> list[str]:
        """What the answer says about the limit: clamping, and any wall-clock stop."""
        out = []
        if self.clamped:
            out.append(f"the time limit was clamped from {self.requested_s:g} s to the server's cap of "
                       f"{self.limit_s:g} s")
        if self.stops:
            out.append("the wall clock stopped " + ", ".join(self.stops) + " before its work budget was spent "
                       "(a busy machine): this plan may differ from another run of the same request and seed")
        return out


@dataclass
class Budget:
    """Deterministic work for a group of phases, and the wall-clock time they must stop by."""

    seconds: float  # calibrated seconds of work; phases take shares of it
    end: float  # time.monotonic() at which every phase of the group stops
    deadline: Deadline
    reserve_s: float = 0.0  # the closing phases' calibrated cost, which the window leaves before the limit
    speed: float = 1.0  # the work speed `seconds` was counted at (calibrated seconds per wall second)
    slowness: float = 1.0  # wall seconds per calibrated second seen so far (at least 1)

    def observe(self, work_s: float, wall_s: float) -> None:
        """`work_s` calibrated seconds of work took `wall_s`: when that is slower than calibrated, the closing
        phases will be too, so the window ends earlier (never later)."""
        if work_s < MIN_OBSERVED_WORK_S or wall_s <= work_s * self.slowness:
            return
        self.slowness = wall_s / work_s
        self.end = min(self.end, self.deadline.end - self.reserve_s * self.slowness)

    def work(self, share: float) -> float:
        return share * self.seconds

    def left(self) -> float:
        return max(0.0, self.end - time.monotonic())

    def expired(self, phase: str) -> bool:
        """True once the wall clock has passed the end (and then the phase is recorded as cut short)."""
        if time.monotonic() < self.end:
            return False
        self.deadline.record_stop(phase)
        return True

    def stopper(self, phase: str) -> Callable[[], bool]:
        return lambda: self.expired(phase)

    def split(self, shares: list[float]) -> list["Budget"]:
        """Consecutive parts: part k gets shares[k] of the work and its wall-clock window ends where the
        cumulative share says (counted from now), so an early part cannot eat a later part's time."""
        now = time.monotonic()
        window = max(0.0, self.end - now)
        out, cum = [], 0.0
        for s in shares:
            cum += s
            out.append(Budget(seconds=s * self.seconds, end=now + min(1.0, cum) * window, deadline=self.deadline,
                              reserve_s=self.reserve_s, speed=self.speed))
        return out
