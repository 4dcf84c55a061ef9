"""Traffic requirements as per-hop collision ceilings: the monotone inversion, and the planner honouring it."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from cohop.planning.instance import build_instance
from cohop.planning.requirements import PlanRequirements
from cohop.prepare import prepare_site
from cohop.site import Traffic
from cohop.stats import runs
from cohop.traffic import ceiling, latency
from cohop.traffic.messages import message_hops, watchdog_messages
from tests import sites
from tests.planning.helpers import tiny_site


def _system(traffic: Traffic, **kw):
    site = sites.load(sites.site([sites.system("A", **kw)]))
    return dataclasses.replace(site.systems[0], traffic=traffic)


def _surrogate_stops(system, fade, c):
    # independent surrogate by hand: attempt loss 1 - ((1 - c)(1 - f))^n, message loss a^R, runs reaching m
    # once per run (1 - P) P^m per message (cohop.stats.runs [3], Feller's independent limit)
    a = 1 - ((1 - c) * (1 - fade)) ** system.hops_per_attempt
    big_p = a ** (system.retry_limit + 1)
    m = watchdog_messages(system, system.traffic)
    return runs.run_rate_independent(big_p, m) * 3600 / (message_hops(system, system.traffic) * system.dwell_s)


def test_stop_ceiling_is_the_boundary_of_the_requirement():
    s = _system(Traffic(message_interval_s=0.005, watchdog_s=0.02, max_stops_per_hour=0.01), retry_limit=1)
    fade = 0.01
    c = ceiling.collision_ceiling(s, fade)
    assert 0 < c < 1
    assert _surrogate_stops(s, fade, c) <= 0.01
    assert _surrogate_stops(s, fade, c * (1 + 1e-6)) > 0.01


def test_deadline_ceiling_is_the_boundary_of_the_requirement():
    s = _system(Traffic(message_interval_s=0.01, deadline_s=0.0015, deadline_probability=0.99), retry_limit=3)
    fade = 0.001
    c = ceiling.collision_ceiling(s, fade)

    def met(x):
        a = 1 - (1 - x) * (1 - fade)
        offsets = latency.attempt_offsets_s(4, 1, s.dwell_s, s.packet_airtime_s)
        return float(latency.cdf(0.0015, [(1 - a) * a**k for k in range(4)], offsets, s.dwell_s))

    assert met(c) >= 0.99 > met(c * (1 + 1e-6))


def test_no_requirement_no_ceiling_and_fading_alone_failing():
    assert ceiling.collision_ceiling(_system(Traffic(message_interval_s=0.01)), 0.1) == math.inf
    s = _system(Traffic(message_interval_s=0.01, deadline_s=1.0, deadline_probability=0.9999), retry_limit=0)
    assert ceiling.collision_ceiling(s, 0.01) == -1.0


def test_the_planning_instance_takes_the_traffic_ceiling():
    body = tiny_site(n_systems=2, n_channels=8)
    site = sites.load(body)
    traffic = Traffic(message_interval_s=0.05, watchdog_s=0.2, max_stops_per_hour=1e-3)
    site = dataclasses.replace(site, systems=(dataclasses.replace(site.systems[0], traffic=traffic),
                                              site.systems[1]))
    prep = prepare_site(site)
    inst = build_instance(prep, PlanRequirements())
    want = ceiling.collision_ceiling(site.systems[0], float(prep.fade_probability[0]))
    assert inst.ceilings[0] == pytest.approx(want) and math.isinf(inst.ceilings[1])


def test_work_cap_lowers_the_phase_samples_then_refuses(monkeypatch):
    from cohop import limits
    from cohop.traffic import figures

    traffic = Traffic(message_interval_s=0.004, watchdog_s=0.04)
    site = sites.load(sites.site([sites.system("A", sequence=list(range(10))),
                                  sites.system("B", hop_set=range(5), dwell_s=1.25e-3, packet_airtime_s=1e-3)]))
    site = dataclasses.replace(site, systems=(dataclasses.replace(site.systems[0], traffic=traffic), site.systems[1]))
    prep = prepare_site(site)
    orders = [np.arange(10), np.arange(5)]
    per_sample = figures.work_cells(prep, orders, 0, 1)
    monkeypatch.setattr(limits, "MAX_TRAFFIC_CELLS", 20 * per_sample)
    assert figures.samples_within_cap(prep, orders, 0) == 20
    (fig,) = figures.site_traffic(prep, [np.arange(10), np.arange(5)], orders, ["request", "request"])
    assert fig.phase_samples == 20
    monkeypatch.setattr(limits, "MAX_TRAFFIC_CELLS", 7 * per_sample)
    assert figures.site_traffic(prep, [np.arange(10), np.arange(5)], orders, ["request", "request"]) == ()
    assert [p[0] for p in figures.work_problems(prep, orders)] == [("systems", 0, "traffic")]


def test_site_total_cap_refuses_an_assessment_and_trims_a_plan(monkeypatch):
    from cohop import limits
    from cohop.traffic import figures

    traffic = Traffic(message_interval_s=0.004, watchdog_s=0.04)
    site = sites.load(sites.site([sites.system("A", sequence=list(range(10))),
                                  sites.system("B", sequence=list(range(10, 15)))]))
    site = dataclasses.replace(site, systems=tuple(dataclasses.replace(s, traffic=traffic) for s in site.systems))
    prep = prepare_site(site)
    orders = [np.arange(10), np.arange(10, 15)]
    first = figures.work_cells(prep, orders, 0, figures.MAX_LATTICE)  # counted at the most a lattice may take
    monkeypatch.setattr(limits, "MAX_TRAFFIC_CELLS_TOTAL", first)  # room for the first system only
    assert [p[0] for p in figures.work_problems(prep, orders)] == [("systems",)]
    kept = figures.site_traffic(prep, [np.arange(10), np.arange(10, 15)], orders, ["request"] * 2)
    assert [f.system_id for f in kept] == ["A"]
