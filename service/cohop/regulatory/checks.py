"""Check builders: each returns a RuleCheck that tests one rule on a HopContext.

The builders are generic; `profiles.py` instantiates them with each
profile's numbers and citations. Every finding states what was measured and
the limit, so a user can recompute it from the request.
"""

from __future__ import annotations

import math
from typing import Callable

import numpy as np

from cohop.regulatory import power
from cohop.regulatory.power import GainReduction, PowerLimit
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
            return _finding(rule, False, base + f"; the average is within the limit, but a {window:.3f} s window "
                            f"placed to catch {visits_max} visits sees {worst * 1e3:.1f} ms, over it: a warning "
                            "because the rule may be read per window rather than on average",
                            measured=avg, limit=limit_s, unit="s", warn=True)
        return _finding(rule, True, base, measured=avg, limit=limit_s, unit="s")

    return RuleCheck(rule, check)


def conducted_power(rule: Rule, limit: Callable[[HopContext], PowerLimit | None],
                    reduction: Callable[[HopContext], GainReduction]) -> RuleCheck:
    """Conducted output power against a limit stated in watts, lowered by `reduction` for antenna gain
    (15.247(b)(4) dB for dB, or 15.247(c)(1) for fixed point-to-point systems)."""

    def check(ctx: HopContext) -> Finding:
        base = limit(ctx)
        p = ctx.system.tx_power_dbm
        if base is None:
            return _finding(rule, False, f"no power allowance for {ctx.count} channels ({rule.summary})",
                            measured=p, unit="dBm")
        cut = reduction(ctx)
        bound = base.dbm - cut.db
        why = power.limit_source(base, cut)
        return _finding(rule, power.within(p, bound), power.comparison(p, bound, "conducted", why),
                        measured=p, limit=bound, unit="dBm")

    return RuleCheck(rule, check)


def eirp(rule: Rule, limit: Callable[[HopContext], PowerLimit | None]) -> RuleCheck:
    """e.i.r.p. (conducted power plus antenna gain) against a limit stated in watts."""

    def check(ctx: HopContext) -> Finding:
        cap = limit(ctx)
        e = ctx.system.eirp_dbm
        if cap is None:
            return _finding(rule, False, f"no e.i.r.p. allowance for {ctx.count} channels ({rule.summary})",
                            measured=e, unit="dBm")
        msg = power.comparison(e, cap.dbm, "e.i.r.p.", power.limit_source(cap))
        return _finding(rule, power.within(e, cap.dbm), msg, measured=e, limit=cap.dbm, unit="dBm")

    return RuleCheck(rule, check)


def medium_utilisation(rule: Rule, limit_fraction: float) -> RuleCheck:
    """MU = duty cycle x (e.i.r.p. / 100 mW) (from memory of EN 300 328), computed in milliwatts."""

    def check(ctx: HopContext) -> Finding:
        e = ctx.system.eirp_dbm
        mu = ctx.duty_fraction * power.mw_of_dbm(e) / (power.EU_MU_REFERENCE.watts * 1e3)
        ok = mu <= limit_fraction + _EPS
        share, cap = _percent_pair(mu, limit_fraction, ok)
        return _finding(rule, ok, f"medium utilisation {share} % (duty {ctx.duty_fraction * 100:.3f} % at "
                                  f"{power.power_text(e)} e.i.r.p., relative to 100 mW), at most {cap} %",
                        measured=mu, limit=limit_fraction, unit="fraction")

    return RuleCheck(rule, check)


def _percent_pair(value: float, limit: float, ok: bool) -> tuple[str, str]:
    """Both as percentages, with enough decimals that a failing value prints above its limit."""
    for d in range(2, 12):
        a, b = f"{value * 100:.{d}f}", f"{limit * 100:.{d}f}"
        if ok or a != b:
            return a, b
    return a, b


def sequence_order(rule: Rule) -> RuleCheck:
    """Equal use and a pseudo-random order, on the hop sequence when one is known."""

    def check(ctx: HopContext) -> Finding:
        if ctx.sequence is None:
            return Finding(rule=rule, status=WARNING,
                           message="not checked: pseudo-random order and equal use cannot be seen from a hop set, "
                                   "and no sequence was given (give the system's sequence to check them)")
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


def point_to_point(rule: Rule, effect: Callable[[HopContext], tuple[bool, str]]) -> RuleCheck:
    """What declaring a system fixed point-to-point does under this profile; no finding for other systems.

    `effect` returns (relaxed, words): when the declaration relaxes a limit (47 CFR 15.247(c)(1)) the finding
    is a warning, because exclusive fixed point-to-point use is the operator's declaration and cannot be
    checked here; when it changes nothing the finding passes and says why."""

    def check(ctx: HopContext) -> Finding | None:
        if not ctx.system.fixed_point_to_point:
            return None
        relaxed, words = effect(ctx)
        return Finding(rule=rule, status=WARNING if relaxed else PASS, message=words)

    return RuleCheck(rule, check)
