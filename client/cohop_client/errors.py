"""One exception tree with one root, CohopError.

Each error carries the HTTP status (if a response came back), the server's
problem-details body (if any) and the URL. Low-level `requests` errors are
translated here and never leak.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class FieldError:
    """One offending field: a JSON pointer into the request body and why."""

    pointer: str
    detail: str


class CohopError(Exception):
    """Root of every error the client raises."""

    def __init__(self, message: str, *, status: int | None = None, problem: dict | None = None,
                 url: str | None = None):
        super().__init__(message)
        self.status = status
        self.problem = problem or {}
        self.url = url


class TransportError(CohopError):
    """The request did not reach the service or no usable answer came back."""


class RequestTimeout(TransportError):
    """No answer within the client's timeout."""


class InvalidRequest(CohopError):
    """The service rejected the request (4xx); `field_errors` lists each field."""

    @property
    def field_errors(self) -> list[FieldError]:
        return [FieldError(e.get("pointer", ""), e.get("detail", "")) for e in self.problem.get("errors", [])]


class ServerError(CohopError):
    """The service failed (5xx)."""


@dataclass(frozen=True)
class Conflict:
    """One requirement taking part in an infeasibility, as the server explains it."""

    requirement: str
    systems: tuple[str, ...]
    detail: str
    citation: str | None
    channels: tuple[tuple[int, int], ...]
    relax: str


class NoFeasiblePlan(CohopError):
    """No plan meets the requirements (`proven`), or none was found in time (not `proven`)."""

    PROBLEM_TYPES = ("urn:cohop:problem:no-feasible-plan", "urn:cohop:problem:no-plan-found-in-time")

    @property
    def proven(self) -> bool:
        return bool(self.problem.get("proven"))

    @property
    def conflicts(self) -> list[Conflict]:
        return [Conflict(c.get("requirement", ""), tuple(c.get("systems", ())), c.get("detail", ""),
                         c.get("citation"), tuple(tuple(r) for r in c.get("channels", ())), c.get("relax", ""))
                for c in self.problem.get("conflicts", [])]
