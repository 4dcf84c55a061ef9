"""What a rule and a finding are."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from cohop.site import Band, System

#: How sure we are of a rule's text, published, seen quoted, partly seen, from memory, or common practice.
PUBLISHED = "published"
SEEN_QUOTED = "seen quoted"
PARTLY_SEEN = "partly seen"
FROM_MEMORY = "from memory"
COMMON_PRACTICE = "common practice"

PASS, FAIL, WARNING = "pass", "fail", "warning"


@dataclass(frozen=True)
class Rule:
    """`id` is the profile id, a dot and the rule's kind (`fcc15.247-902-928.channels`); profile ids may hold
    dots (band edges such as 2483.5), kinds never do."""

    id: str
    title: str
    citation: str
    certainty: str
    summary: str

    @property
    def kind(self) -> str:
        return self.id.rsplit(".", 1)[1]


@dataclass(frozen=True)
class Finding:
    rule: Rule
    status: str
    message: str
    measured: float | None = None
    limit: float | None = None
    unit: str = ""


@dataclass(frozen=True)
class HopContext:
    """One system with the hop set under test."""

    system: System
    channels: np.ndarray  # sorted grid indices
    centres_hz: np.ndarray  # their centre frequencies, ascending
    band: Band
    sequence: np.ndarray | None = None  # the hop order (grid indices), if known

    @property
    def count(self) -> int:
        return int(self.channels.size)

    @property
    def separation_hz(self) -> float | None:
        """Smallest distance between two channels of the hop set."""
        if self.centres_hz.size < 2:
            return None
        return float(np.min(np.diff(self.centres_hz)))

    @property
    def duty_fraction(self) -> float:
        """Share of time transmitting: one packet in a share `activity` of dwells."""
        s = self.system
        return s.activity_fraction * s.packet_airtime_s / s.dwell_s


@dataclass(frozen=True)
class RuleCheck:
    """A rule and its test; the test returns None when the rule does not concern this system."""

    rule: Rule
    check: Callable[[HopContext], Finding | None]
