"""Check builders: each returns a RuleCheck that tests one rule on a HopContext.

The builders are generic; `profiles.py` instantiates them with each
profile's numbers and citations. Every finding states what was measured and
the limit, so a user can recompute it from the request.
"""

from __future__ import annotations

import math
from typing import Callable

import numpy as np

from cohop.regulatory.rules import FAIL, PASS, WARNING, Finding, HopContext, Rule, RuleCheck
from cohop.stats.hopping import max_visits_in_window, order_statistics

#: Float noise allowance when comparing measured values with limits.
_EPS = 1e-9


def _finding(rule, ok, message, measured=None, limit=None, unit="", warn=False):
    status = PASS if ok else (WARNING if warn else FAIL)
    return Finding(rule=rule, status=status, message=message, measured=measured, limit=limit, unit=unit)


def band_fit(rule: Rule) -> RuleCheck:
    """Every hop channel's occupied bandwidth lies inside the band edges."""

    def check(ctx: HopContext) -> Finding:
        half = ctx.system.bandwidth_hz / 2
        low = float(ctx.centres_hz[0] - half)
        high = float(ctx.centres_hz[-1] + half)
        ok = low >= ctx.band.low_hz - _EPS and high <= ctx.band.high_hz + _EPS
        msg = (f"occupied spectrum {low / 1e6:.6f}-{high / 1e6:.6f} MHz within band "
               f"{ctx.band.low_hz / 1e6:.6f}-{ctx.band.high_hz / 1e6:.6f} MHz")
        return _finding(rule, ok, msg if ok else "outside: " + msg)

    return RuleCheck(rule, check)


def channel_count(rule: Rule, minimum: Callable[[HopContext], int | None]) -> RuleCheck:
    """At least `minimum(ctx)` channels; None means no channel count allows it."""

    def check(ctx: HopContext) -> Finding:
        need = minimum(ctx)
        if need is None:
            return _finding(rule, False, "no channel count makes this bandwidth compliant here",
                            measured=ctx.count, unit="channels")
        ok = ctx.count >= need
        return _finding(rule, ok, f"{ctx.count} channels, at least {need} required",
                        measured=ctx.count, limit=need, unit="channels")

    return RuleCheck(rule, check)


def max_bandwidth(rule: Rule, limit_hz: float) -> RuleCheck:
    def check(ctx: HopContext) -> Finding:
        bw = ctx.system.bandwidth_hz
        return _finding(rule, bw <= limit_hz + _EPS,
                        f"20 dB bandwidth {bw / 1e3:.3f} kHz, at most {limit_hz / 1e3:.3f} kHz",
                        measured=bw, limit=limit_hz, unit="Hz")

    return RuleCheck(rule, check)


def min_separation(rule: Rule, required_hz: Callable[[HopContext], float]) -> RuleCheck:
    def check(ctx: HopContext) -> Finding:
        need = required_hz(ctx)
        sep = ctx.separation_hz
        if sep is None:
            return _finding(rule, True, "a single channel has no separation to check", limit=need, unit="Hz")
        return _finding(rule, sep >= need * (1 - _EPS),
                        f"closest channels {sep / 1e3:.3f} kHz apart, at least {need / 1e3:.3f} kHz required",
                        measured=sep, limit=need, unit="Hz")

    return RuleCheck(rule, check)


def occupancy(rule: Rule, limit_s: float, window_s: Callable[[HopContext], float]) -> RuleCheck:
    """Time on any one channel within a window, with a packet sent on every visit (worst case of our
    traffic model). Visits come from the hop sequence when it is known; without one each channel is
    taken as visited once per period of N dwells. Fails when the average occupancy of the busiest
    channel exceeds the limit or a single visit alone does; warns when a window placed to catch the
    most visits would exceed it.
    """

    def check(ctx: HopContext) -> Finding:
        s = ctx.system
        window = window_s(ctx)
        if ctx.sequence is not None:
            seq = ctx.sequence
            period = seq.size * s.dwell_s
            per_period = max(int(np.count_nonzero(seq == c)) for c in np.unique(seq))
            visits_max = max(max_visits_in_window(seq, int(c), window / s.dwell_s) for c in np.unique(seq))
            source = "on the hop sequence"
        else:
            period = ctx.count * s.dwell_s
            per_period = 1
            visits_max = math.ceil(window / period * (1 - _EPS))
            source = "assuming one visit per channel per period"
        avg = s.packet_airtime_s * per_period * window / period
        worst = s.packet_airtime_s * visits_max
        base = (f"{avg * 1e3:.1f} ms average on the busiest channel within {window:.3f} s "
                f"(limit {limit_s * 1e3:.1f} ms; period {period:.3f} s; {source})")
        if avg > limit_s * (1 + _EPS):
            return _finding(rule, False, base, measured=avg, limit=limit_s, unit="s")
        if s.packet_airtime_s > limit_s * (1 + _EPS):
            return _finding(rule, False, base + f"; one visit alone lasts {s.packet_airtime_s * 1e3:.1f} ms",
                            measured=avg, limit=limit_s, unit="s")
        if worst > limit_s * (1 + _EPS):
            return _finding(rule, False, base + f"; a window catching {visits_max} visits sees "
                            f"{worst * 1e3:.1f} ms", measured=avg, limit=limit_s, unit="s", warn=True)
        return _finding(rule, True, base, measured=avg, limit=limit_s, unit="s")

    return RuleCheck(rule, check)


def conducted_power(rule: Rule, limit_dbm: Callable[[HopContext], float | None],
                    gain_allowance_dbi: float | None = 6.0) -> RuleCheck:
    """Conducted output power; above `gain_allowance_dbi` the limit falls dB for dB."""

    def check(ctx: HopContext) -> Finding:
        base = limit_dbm(ctx)
        p = ctx.system.tx_power_dbm
        if base is None:
            return _finding(rule, False, "no power allowance for this channel count", measured=p, unit="dBm")
        cut = 0.0
        if gain_allowance_dbi is not None:
            cut = max(0.0, ctx.system.antenna_gain_dbi - gain_allowance_dbi)
        limit = base - cut
        note = f" (reduced {cut:.1f} dB for antenna gain above {gain_allowance_dbi:g} dBi)" if cut else ""
        return _finding(rule, p <= limit + _EPS, f"{p:.1f} dBm conducted, at most {limit:.1f} dBm{note}",
                        measured=p, limit=limit, unit="dBm")

    return RuleCheck(rule, check)


def eirp(rule: Rule, limit_dbm: Callable[[HopContext], float | None]) -> RuleCheck:
    def check(ctx: HopContext) -> Finding:
        limit = limit_dbm(ctx)
        e = ctx.system.eirp_dbm
        if limit is None:
            return _finding(rule, False, "no e.i.r.p. allowance for this channel count", measured=e, unit="dBm")
        return _finding(rule, e <= limit + _EPS, f"{e:.1f} dBm e.i.r.p., at most {limit:.1f} dBm",
                        measured=e, limit=limit, unit="dBm")

    return RuleCheck(rule, check)


def medium_utilisation(rule: Rule, limit_fraction: float) -> RuleCheck:
    """MU = duty cycle x (e.i.r.p. / 100 mW) (from memory of EN 300 328)."""

    def check(ctx: HopContext) -> Finding:
        mu = ctx.duty_fraction * 10 ** (ctx.system.eirp_dbm / 10) / 100.0
        return _finding(rule, mu <= limit_fraction + _EPS,
                        f"medium utilisation {mu * 100:.2f} % (duty {ctx.duty_fraction * 100:.2f} % at "
                        f"{ctx.system.eirp_dbm:.1f} dBm e.i.r.p.), at most {limit_fraction * 100:.0f} %",
                        measured=mu, limit=limit_fraction, unit="fraction")

    return RuleCheck(rule, check)


def sequence_order(rule: Rule) -> RuleCheck:
    """Equal use and a pseudo-random order, on the hop sequence when one is known."""

    def check(ctx: HopContext) -> Finding:
        if ctx.sequence is None:
            return Finding(rule=rule, status=WARNING,
                           message="not checked: order and equal use need the hopping sequence, "
                                   "which this request does not carry")
        seq = ctx.sequence
        counts = [int(np.count_nonzero(seq == c)) for c in ctx.channels]
        reversals, distinct, random_like = order_statistics(seq)
        equal = min(counts) == max(counts)
        msg = (f"each channel used {min(counts)}-{max(counts)} times per period of {seq.size} hops; "
               f"{reversals * 100:.0f} % direction reversals, {distinct} distinct step sizes (our screening: "
               "20-95 % reversals and a fifth of the steps distinct)")
        return _finding(rule, equal and random_like, msg)

    return RuleCheck(rule, check)


def not_encoded(rule: Rule) -> RuleCheck:
    """A rule we know applies but deliberately do not encode."""

    def check(ctx: HopContext) -> Finding:
        return Finding(rule=rule, status=WARNING, message="not checked here: " + rule.summary)

    return RuleCheck(rule, check)
