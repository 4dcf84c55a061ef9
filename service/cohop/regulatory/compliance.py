"""Check one system's hop set against its regulatory profile."""

from __future__ import annotations

import numpy as np

from cohop.regulatory.profiles import Profile
from cohop.regulatory.rules import Finding, HopContext
from cohop.site import Band, System


def check_compliance(profile: Profile, system: System, channels, centres_hz, band: Band,
                     sequence=None) -> list[Finding]:
    """All findings of `profile` for `system` hopping over grid `channels`.

    `centres_hz` are the centre frequencies of those channels; `band` the
    effective band edges (the profile's, or the request's for custom);
    `sequence`, the hop order, lets order, equal use and occupancy be checked
    on the real sequence.
    """
    order = np.argsort(centres_hz)
    ctx = HopContext(system=system, channels=np.asarray(channels)[order],
                     centres_hz=np.asarray(centres_hz, dtype=float)[order], band=band,
                     sequence=None if sequence is None else np.asarray(sequence))
    findings = (rc.check(ctx) for rc in profile.checks)
    return [f for f in findings if f is not None]  # a check may not apply to this system (point-to-point)
