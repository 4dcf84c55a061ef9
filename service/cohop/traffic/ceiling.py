"""A system's traffic requirement as a ceiling on its per-hop collision probability, for the planner.

The planner works with each system's mean per-hop collision c (`cohop.planning.instance`). Under the
independent surrogate (hops independent, per-hop loss 1 - (1 - c)(1 - f), attempt loss
a = 1 - (1 - loss)^n, messages independent with loss P = a^R; `cohop.stats.retries`, Feller's runs in
`cohop.stats.runs`):

- P(deadline met) = sum_k (1 - a) a^(k - 1) clip((deadline - c_k) / D_v, 0, 1) falls as c grows;
- stops per hour = (1 - P) P^m x 3600 / I grows with P while P < m / (m + 1), so the ceiling is sought
  there (beyond it every message is nearly always lost anyway).

The largest c meeting both is found by bisection (monotone inversion). The surrogate ignores the
correlations the exact figures keep, so the plan's traffic figures are re-checked afterwards
(`cohop.traffic.figures`) and reported with each system's clearance.
"""

from __future__ import annotations

import math

from cohop.site import System
from cohop.traffic import latency
from cohop.traffic.messages import message_hops, watchdog_messages

_STEPS = 60


def _meets(system: System, fade: float, c: float) -> bool:
    t = system.traffic
    n, attempts = system.hops_per_attempt, system.retry_limit + 1
    a = 1.0 - ((1.0 - c) * (1.0 - fade)) ** n
    if t.deadline_s is not None and t.deadline_probability is not None:
        weights = [(1.0 - a) * a**k for k in range(attempts)]
        offsets = latency.attempt_offsets_s(attempts, n, system.dwell_s, system.packet_airtime_s)
        if float(latency.cdf(t.deadline_s, weights, offsets, system.dwell_s)) < t.deadline_probability:
            return False
    m = watchdog_messages(system, t)
    if m is not None and t.max_stops_per_hour is not None:
        big_p = a**attempts
        if big_p >= m / (m + 1.0):
            return False
        interval = message_hops(system, t) * system.dwell_s
        if (1.0 - big_p) * big_p**m * 3600.0 / interval > t.max_stops_per_hour:
            return False
    return True


def collision_ceiling(system: System, fade_probability: float) -> float:
    """Largest per-hop collision probability that meets the system's traffic requirement under the
    independent surrogate; inf without a requirement, -1 when fading alone fails it."""
    t = system.traffic
    if t is None or ((t.deadline_s is None or t.deadline_probability is None)
                     and (t.watchdog_s is None or t.max_stops_per_hour is None)):
        return math.inf
    if not _meets(system, fade_probability, 0.0):
        return -1.0
    lo, hi = 0.0, 1.0
    if _meets(system, fade_probability, hi):
        return 1.0
    for _ in range(_STEPS):
        mid = 0.5 * (lo + hi)
        if _meets(system, fade_probability, mid):
            lo = mid
        else:
            hi = mid
    return lo
