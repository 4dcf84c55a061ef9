"""Domain errors. The HTTP layer turns them into problem details."""

from __future__ import annotations


class SiteError(ValueError):
    """A site that is well-formed but cannot be evaluated as given.

    `problems` is a list of (JSON pointer into the request, message).
    """

    def __init__(self, problems: list[tuple[str, str]]):
        self.problems = list(problems)
        super().__init__("; ".join(f"{p}: {m}" for p, m in self.problems))

    def under(self, prefix: str) -> "SiteError":
        """The same problems with pointers below `prefix` (e.g. "/site")."""
        return SiteError([(prefix + p, m) for p, m in self.problems])
