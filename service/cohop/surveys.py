"""Turn spectrum surveys into fixed interferers the evaluation and the planner use.

For each survey and each system it applies to, every grid channel gets the
power the trace puts in that system's channel bandwidth
(`cohop.physics.spectrum`) and, if the survey has it, the share of sweeps
it was occupied. A channel is occupied when its power exceeds the trace's
own floor (the median channel power of the survey) by the survey's
detection margin. Runs of neighbouring occupied channels whose levels agree
within 3 dB and whose occupancy agrees within 0.1 become one interferer
spanning the run's channel centres, with the run's mean channel power in the
victim's channel and its mean occupancy as activity (1 without occupancy
data: continuous, the cautious reading). A survey speaks only for the
receivers where it was taken: the systems it names, or, for a survey taken
at a position, the systems whose receivers (their `position`) lie on the
same floor within the survey's radius. The interferers it yields reach the
other systems at a negligible level.

Work: the trace is integrated once per distinct bandwidth of the systems a
survey stands for (vectorised over the grid), within the request bounds of
`cohop.limits` (points, surveys, integration work); the interferers derived
are capped at `limits.MAX_DERIVED_INTERFERERS` (a 422 names the surveys).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from cohop import limits
from cohop.errors import SiteError
from cohop.physics.spectrum import channel_powers_mw, mw_to_dbm, shares_occupied
from cohop.site import Interferer, InterfererLevel, Site, Survey
from cohop.site_rules import stands_for

#: Level of a survey-derived interferer at systems the survey does not apply to [dBm].
ELSEWHERE_DBM = -250.0
RUN_LEVEL_DB = 3.0
RUN_ACTIVITY = 0.1


@dataclass(frozen=True)
class DerivedInterferer:
    interferer: Interferer
    survey: str
    system: str
    channels: tuple[int, int]  # inclusive grid channel range
    channel_level_dbm: float  # mean power in the system's channel
    floor_dbm: float  # the survey's own floor in that channel bandwidth


def channel_levels(survey: Survey, centres_hz: np.ndarray, bandwidth_hz: float) -> tuple[np.ndarray, np.ndarray]:
    """Per grid channel: power in the bandwidth [dBm] (nan where the trace does not reach) and activity."""
    p = channel_powers_mw(survey.frequencies_hz, survey.levels_dbm, survey.resolution_bandwidth_hz, centres_hz,
                          bandwidth_hz, survey.noise_bandwidth_factor)
    measured = p > 0  # False for nan too
    levels = np.where(measured, mw_to_dbm(np.where(measured, p, 1.0)), np.nan)
    activity = np.ones(centres_hz.size)
    if survey.occupancy_fraction is not None:
        shares = shares_occupied(survey.frequencies_hz, survey.occupancy_fraction, centres_hz, bandwidth_hz)
        activity = np.where(measured, shares, 1.0)
    return levels, activity


def _runs(occupied: np.ndarray, levels: np.ndarray, activity: np.ndarray) -> list[tuple[int, int]]:
    out, start = [], None
    for c in range(occupied.size + 1):
        same = (start is not None and c < occupied.size and occupied[c]
                and abs(levels[c] - levels[start]) <= RUN_LEVEL_DB and abs(activity[c] - activity[start]) <= RUN_ACTIVITY)
        if start is not None and not same:
            out.append((start, c - 1))
            start = None
        if start is None and c < occupied.size and occupied[c]:
            start = c
    return out


def _occupied_runs(survey: Survey, centres_hz: np.ndarray, bandwidth_hz: float):
    """(levels, activity, floor, runs) of one survey over one bandwidth; None if it measures no channel."""
    levels, activity = channel_levels(survey, centres_hz, bandwidth_hz)
    measured = ~np.isnan(levels)
    if not measured.any():
        return None
    floor = float(np.median(levels[measured]))
    occupied = measured & (levels >= floor + survey.detection_margin_db)
    return levels, activity, floor, _runs(occupied, np.nan_to_num(levels, nan=-999.0), activity)


def _too_many(count: int) -> SiteError:
    return SiteError([("/surveys", f"the surveys yield {count} or more interferers, above the cap of "
                                   f"{limits.MAX_DERIVED_INTERFERERS}: raise detection_margin_db or apply "
                                   "each survey to fewer systems")])


def derive(site: Site, centres_hz: np.ndarray) -> list[DerivedInterferer]:
    systems = {s.id: s for s in site.systems}
    out = []
    for survey in site.surveys:
        by_bandwidth: dict[float, tuple | None] = {}
        for sid in stands_for(survey, site.systems):
            bw = systems[sid].bandwidth_hz
            if bw not in by_bandwidth:
                by_bandwidth[bw] = _occupied_runs(survey, centres_hz, bw)
            if by_bandwidth[bw] is None:
                continue
            levels, activity, floor, runs = by_bandwidth[bw]
            if len(out) + len(runs) > limits.MAX_DERIVED_INTERFERERS:
                raise _too_many(len(out) + len(runs))
            for k, (lo, hi) in enumerate(runs):
                mean_mw = float(np.mean(np.power(10.0, levels[lo:hi + 1] / 10)))
                width = float(centres_hz[hi] - centres_hz[lo])
                total = mean_mw * max(1.0, width / bw)  # the model hands a channel B / width of the total
                lv = [InterfererLevel(system=s.id, level_dbm=float(mw_to_dbm(total)) if s.id == sid else ELSEWHERE_DBM)
                      for s in site.systems]
                itf = Interferer(id=f"survey/{survey.id}/{sid}/{k + 1}", low_hz=float(centres_hz[lo]),
                                 high_hz=float(centres_hz[hi]), label=f"from survey {survey.id} at {sid}",
                                 levels=tuple(lv), activity_fraction=float(np.mean(activity[lo:hi + 1])))
                out.append(DerivedInterferer(itf, survey.id, sid, (lo, hi), float(mw_to_dbm(mean_mw)), floor))
    return out


def with_survey_interferers(site: Site, centres_hz: np.ndarray) -> tuple[Site, list[DerivedInterferer]]:
    derived = derive(site, centres_hz)
    if not derived:
        return site, []
    return replace(site, interferers=site.interferers + tuple(d.interferer for d in derived)), derived
