"""Messages in dwells: how many hops apart they start, and how many lost in a row make a watchdog stop."""

from __future__ import annotations

import math

from cohop.site import System, Traffic


def message_hops(system: System, traffic: Traffic) -> int:
    """g: whole dwells between message starts (`cohop.traffic.figures`, step 1)."""
    span = (system.retry_limit + 1) * system.hops_per_attempt
    return max(math.ceil(traffic.message_interval_s / system.dwell_s - 1e-9), span, 1)


def watchdog_messages(system: System, traffic: Traffic) -> int | None:
    """m = ceil(watchdog_s / I) (`cohop.traffic.figures`, step 6)."""
    if traffic.watchdog_s is None:
        return None
    return max(1, math.ceil(traffic.watchdog_s / (message_hops(system, traffic) * system.dwell_s) - 1e-9))
