"""Benchmark: every system's traffic figures (latency, deadline, runs, watchdog stops) on the medium site.

Target (issue 13): under 1 s for the 15 systems of the medium site with 50-hop orders. Then a planning
run of the medium site (50 channels each, 10 s) with a watchdog ceiling on three crane remotes: wall time,
gap, how many requirements bind, and the re-checked traffic figures of the planned orders. The orders are
built once (`build_sequences`, not timed in the figure); each system gets a traffic requirement of its
kind (remotes: 100 ms deadline and a watchdog of five message intervals; sensors and telemetry: delivery
within a minute). Baseline of the same run: the assessment of the same hop sets (`assess_hop_sets`), the
figures the answer already carried. Run from the repository root: `python bench/bench_traffic.py`.
"""

from __future__ import annotations

import dataclasses
import time

import _common  # noqa: F401
from _common import machine, median_time

from bench import sitegen
from cohop.assess import assess_hop_sets, resolve_hop_sets
from cohop.prepare import prepare_site
from cohop.sequences.construct import build_sequences
from cohop.site import Traffic
from cohop.site_rules import load_site
from cohop.traffic.figures import site_traffic
from cohop.planning.engine import SolveSettings, plan_site
from cohop.planning.requirements import PlanRequirements, SystemRequirement
from cohop.jobs.plan import plan_traffic

#: Per kind of system (bench.sitegen.KINDS): message interval, deadline, probability, watchdog, stops/hour.
REQUIREMENTS = {
    "telemetry": Traffic(1.0, deadline_s=60.0, deadline_probability=0.999),
    "sensors": Traffic(10.0, deadline_s=120.0, deadline_probability=0.99),
    "crane": Traffic(0.05, deadline_s=0.1, deadline_probability=0.999, watchdog_s=0.25, max_stops_per_hour=0.01),
    "vehicle": Traffic(0.1, deadline_s=0.2, deadline_probability=0.999, watchdog_s=0.5, max_stops_per_hour=0.01),
}


def medium_site():
    site = load_site(sitegen.generate("medium", seed=0))
    systems = tuple(dataclasses.replace(s, traffic=REQUIREMENTS[s.id.split("-")[0]]) for s in site.systems)
    return prepare_site(dataclasses.replace(site, systems=systems))


def planning_run(limit_s: float = 10.0) -> None:
    """The medium site without hop sets, traffic (with a watchdog ceiling) on three crane remotes only."""
    site = load_site(sitegen.generate("medium", seed=0, with_hop_sets=False))
    cranes = [s.id for s in site.systems if s.id.startswith("crane")][:3]
    systems = tuple(dataclasses.replace(s, traffic=REQUIREMENTS["crane"]) if s.id in cranes else s
                    for s in site.systems)
    prep = prepare_site(dataclasses.replace(site, systems=systems))
    per = sitegen.SIZES["medium"][4]
    req = PlanRequirements(systems=tuple(SystemRequirement(system=s.id, min_channels=per, max_channels=per)
                                         for s in systems), time_limit_s=limit_s)
    t = time.perf_counter()
    result = plan_site(prep, req, SolveSettings(solver_threads=2, max_solve_s=60.0))
    wall = time.perf_counter() - t
    r = result.report
    gap = "n/a" if r.gap is None else f"{100 * r.gap:.1f} %"
    ceilings = [b for b in r.binding if "loss ceiling" in b]
    print(f"plan with watchdog ceilings on {', '.join(cranes)}: {wall:.1f} s wall ({limit_s:g} s limit), status "
          f"{r.status}, gap {gap}; {len(r.binding)} requirements bind ({len(ceilings)} loss ceilings: "
          f"{'; '.join(ceilings) or 'none'})")
    for f in plan_traffic(result):
        print(f"  {f.system_id}: ceiling {f.collision_ceiling:.4g}, per-hop collision {f.collision_probability:.4g}"
              f" (binds: {f.ceiling_binds}); stops/h {f.stops_per_hour.value:.3g} (<= "
              f"{f.stops_per_hour.interval[1]:.3g}), clearance {f.stops_clearance:.3g}; P(deadline) "
              f"{f.deadline.value:.6f}, clearance {f.deadline_clearance:.3g}")


def main() -> None:
    prep = medium_site()
    sets, origins = resolve_hop_sets(prep)
    seqs, _ = build_sequences(prep, sets)
    orders = [s.channels for s in seqs]
    lengths = sorted({int(o.size) for o in orders})
    print(f"machine: {machine()}")
    print(f"medium site: {prep.n_systems} systems, {prep.n_channels} channels, order lengths {lengths}")
    figures = site_traffic(prep, sets, orders, ["planned"] * prep.n_systems)
    t_traffic = median_time(lambda: site_traffic(prep, sets, orders, ["planned"] * prep.n_systems), 3)
    t_assess = median_time(lambda: assess_hop_sets(prep, sets, origins), 3)
    cpu = time.process_time()
    site_traffic(prep, sets, orders, ["planned"] * prep.n_systems)
    cpu = time.process_time() - cpu
    print(f"traffic figures, all {len(figures)} systems: {t_traffic:.3f} s (target < 1 s); "
          f"assessment of the same hop sets: {t_assess:.3f} s (ratio {t_traffic / t_assess:.1f}); "
          f"CPU time of one run {cpu:.3f} s (the machine is shared: CPU time is the steadier figure)")
    for f in figures:
        dl = "-" if f.deadline is None else f"{f.deadline.value:.6g}"
        st = "-" if f.stops_per_hour is None else f"{f.stops_per_hour.value:.3g} [{f.stops_per_hour.interval[1]:.3g}]"
        print(f"  {f.system_id:13s} samples {f.phase_samples:3d} P(deadline) {dl:>10s}  stops/h {st}")
    planning_run()


if __name__ == "__main__":
    main()
