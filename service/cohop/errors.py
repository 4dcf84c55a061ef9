"""The service's errors: one root, `DomainError`, with a subclass per outcome.

The HTTP layer turns each into problem details (`cohop.api.problems`). Every
class here crosses a process boundary: plans and re-plans run in a solver
process on the production server, and what they raise is pickled back to the
web worker, so each class rebuilds itself from the arguments it was given
(`__reduce__`), never from its message. `tests/test_errors.py` round-trips
every one.
"""

from __future__ import annotations

from dataclasses import dataclass


class DomainError(Exception):
    """Root of every error the service raises on purpose."""

    def __reduce__(self):
        return (type(self), self._init_args())

    def _init_args(self) -> tuple:
        return self.args


class SiteError(DomainError):
    """A site that is well-formed but cannot be evaluated as given.

    `problems` is a list of (JSON pointer into the request, message).
    """

    def __init__(self, problems: list[tuple[str, str]]):
        self.problems = [(str(p), str(m)) for p, m in problems]
        super().__init__("; ".join(f"{p}: {m}" for p, m in self.problems))

    def _init_args(self) -> tuple:
        return (self.problems,)

    def under(self, prefix: str) -> "SiteError":
        """The same problems with pointers below `prefix` (e.g. "/site")."""
        return SiteError([(prefix + p, m) for p, m in self.problems])


@dataclass(frozen=True)
class Conflict:
    """One requirement taking part in an infeasibility, in the user's terms."""

    requirement: str  # e.g. "channel count", "interferer exclusion", "guard"
    systems: tuple[str, ...]
    detail: str
    citation: str | None = None
    channels: tuple[tuple[int, int], ...] = ()  # inclusive channel ranges involved
    relax: str = ""


class PlanInfeasible(DomainError):
    """No plan meets the hard requirements; `conflicts` is a small conflicting set.

    `proven` is False when none was found in time but none was proven impossible either."""

    def __init__(self, conflicts: list[Conflict], proven: bool = True):
        self.conflicts = list(conflicts)
        self.proven = bool(proven)
        super().__init__("; ".join(c.detail for c in self.conflicts))

    def _init_args(self) -> tuple:
        return (self.conflicts, self.proven)


class SolverBusy(DomainError):
    """Every solve slot of this worker is taken (the answer is 503 with Retry-After)."""

    def __init__(self, slots: int = 0):
        self.slots = int(slots)
        super().__init__(f"all {self.slots} solve slot(s) are taken")

    def _init_args(self) -> tuple:
        return (self.slots,)


class SolverCrashed(DomainError):
    """The solver process ended without an answer (killed, out of memory, crashed)."""

    def __init__(self, exitcode: int | None = None):
        self.exitcode = exitcode
        super().__init__(f"the solver process ended without an answer (exit code {exitcode})")

    def _init_args(self) -> tuple:
        return (self.exitcode,)


class SolveAbandoned(DomainError):
    """The client went away before its solve finished; the solve was stopped."""

    def __init__(self, after_s: float = 0.0):
        self.after_s = float(after_s)
        super().__init__(f"the client closed the connection; the solve was stopped after {self.after_s:.1f} s")

    def _init_args(self) -> tuple:
        return (self.after_s,)


#: Every concrete error class, for the round-trip test and the problem-details handler.
ALL = (SiteError, PlanInfeasible, SolverBusy, SolverCrashed, SolveAbandoned)
