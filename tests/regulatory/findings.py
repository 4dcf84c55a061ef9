"""Helpers shared by the profile tests: channel grids and findings keyed by rule."""

from __future__ import annotations

import numpy as np

from cohop.regulatory import PROFILES, check_compliance
from cohop.site import System


def centres(first_hz: float, spacing_hz: float, n: int) -> np.ndarray:
    return first_hz + spacing_hz * np.arange(n)


def run(pid: str, system: System, centres_hz) -> dict:
    """Findings keyed by the rule id without its profile prefix ("channels", "power", "eirp", ...)."""
    p = PROFILES[pid]
    c = np.asarray(centres_hz, dtype=float)
    return {f.rule.kind: f for f in check_compliance(p, system, np.arange(c.size), c, p.band)}


def statuses(findings: dict) -> dict:
    return {k: f.status for k, f in findings.items()}
