"""Bounds across fields that keep the work of one request bounded (`cohop.limits`).

Each check adds messages to the caller's ErrorTree (a `(path, message)` sink)
at the field a user would change.
"""

from __future__ import annotations

import math

from cohop import limits
from cohop import surveys as surveys_domain


def overlap_count(victim_airtime_s: float, burst_s: float, period_s: float) -> int:
    """Most bursts of a source (burst_s every period_s) that one packet of the victim can overlap."""
    return math.ceil((victim_airtime_s + burst_s) / period_s)


def check_overlaps(add, systems, interferers) -> None:
    """(T_v + T_a) / D_a and (T_v + burst) / period stay within MAX_OVERLAPS for every unaligned pair."""
    cap = limits.MAX_OVERLAPS
    for a, src in enumerate(systems):
        others = [v for i, v in enumerate(systems) if i != a and (
            src.time_base_group is None or v.time_base_group != src.time_base_group)]
        if not others:
            continue
        victim = max(others, key=lambda v: v.packet_airtime_s)
        k = overlap_count(victim.packet_airtime_s, src.packet_airtime_s, src.dwell_s)
        if k > cap:
            add(("systems", a, "dwell_s"),
                f"A packet of {victim.id!r} ({victim.packet_airtime_s:g} s) overlaps up to {k} of this system's "
                f"dwells; at most {cap} are modelled: check dwell_s and the packet airtimes.")
    if not systems:
        return
    longest = max(systems, key=lambda v: v.packet_airtime_s)
    for k_, itf in enumerate(interferers):
        if itf.burst_s is None:
            continue
        k = overlap_count(longest.packet_airtime_s, itf.burst_s, itf.period_s)
        if k > cap:
            add(("interferers", k_, "period_s"),
                f"A packet of {longest.id!r} ({longest.packet_airtime_s:g} s) overlaps up to {k} of these bursts; "
                f"at most {cap} are modelled: give the interferer as continuous (no burst_s or period_s) with "
                f"activity_fraction {itf.activity_fraction * itf.burst_s / itf.period_s:.3g} instead.")


def survey_work(survey, systems: tuple, channel_count: int) -> int:
    """Integration work of one survey: distinct system bandwidths it stands for x (points + channels)."""
    ids = set(surveys_domain.stands_for(survey, systems))
    widths = {s.bandwidth_hz for s in systems if s.id in ids}
    return len(widths) * (len(survey.frequencies_hz) + channel_count)


def check_survey_totals(add, surveys, systems: tuple, channel_count: int) -> None:
    points = sum(len(s.frequencies_hz) for s in surveys)
    if points > limits.MAX_SURVEY_POINTS_TOTAL:
        add(("surveys",), f"The surveys hold {points} points together; at most {limits.MAX_SURVEY_POINTS_TOTAL}.")
        return
    work = sum(survey_work(s, systems, channel_count) for s in surveys)
    if work > limits.MAX_SURVEY_WORK:
        add(("surveys",), f"Integrating the surveys over every system's bandwidth takes {work} point-channel steps; "
                          f"at most {limits.MAX_SURVEY_WORK}: thin the traces or apply each survey to fewer systems.")


def check_simulated_hops(add, systems, sequence_packets: int) -> None:
    """sequence_packets x hops per packet stays within MAX_SIMULATED_HOPS for every system."""
    for s in systems:
        hops = (s.retry_limit + 1) * s.hops_per_attempt
        if sequence_packets * hops > limits.MAX_SIMULATED_HOPS:
            add(("search", "sequence_packets"),
                f"{sequence_packets} packets of {hops} hops ({s.id!r}: retry_limit + 1 attempts of "
                f"hops_per_attempt hops) exceed {limits.MAX_SIMULATED_HOPS} simulated hops per system; "
                f"at most {limits.MAX_SIMULATED_HOPS // hops} packets here.")
            return
