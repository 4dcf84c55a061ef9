"""Benchmark: re-planning the medium generated site after one new interferer.

Target (issue "Re-planning"): under 2 s on 2 cores, with a proven minimum change count in the tolerance
mode. Baseline in the same run: planning the changed site from scratch with the same time limit (every
channel of every system may change). Prints figures; asserts nothing.
"""

from __future__ import annotations

import copy
import time

import _common  # noqa: F401
from _common import machine

from bench import sitegen
from cohop.site_rules import load_site
from cohop.planning.replan import CurrentSystem, ReplanMode, replan_site
from cohop.planning.requirements import PlanRequirements, SystemRequirement
from cohop.planning.engine import SolveSettings, plan_site
from cohop.prepare import prepare_site

NEW_INTERFERERS = (
    {"id": "new-gateway", "label": "new 915 MHz gateway", "low_hz": 915.0e6, "high_hz": 916.0e6,
     "activity_fraction": 0.5, "eirp_dbm": 27.0, "position": {"x_m": 500.0, "y_m": 500.0}},
    {"id": "new-reader", "label": "new bursty reader", "centre_hz": 908.0e6, "width_hz": 400e3,
     "activity_fraction": 0.6, "burst_s": 0.2, "period_s": 1.0, "eirp_dbm": 30.0, "position": {"x_m": 200.0, "y_m": 700.0}},
)


def main() -> None:
    print(f"machine: {machine()}")
    settings = SolveSettings(solver_threads=2)
    for seed in (1, 2, 3):
        body = sitegen.generate("medium", seed=seed, with_hop_sets=False)
        req = PlanRequirements(systems=tuple(SystemRequirement(s["id"], min_channels=50, max_channels=50)
                                             for s in body["systems"]), time_limit_s=2.0, seed=seed)
        site = load_site(body)
        plan = plan_site(prepare_site(site), req, settings)
        current = [CurrentSystem(s.id, tuple(h.tolist()), tuple(q.channels.tolist()))
                   for s, h, q in zip(site.systems, plan.hop_sets, plan.sequences.report.sequences)]
        for itf in NEW_INTERFERERS:
            changed = copy.deepcopy(body)
            changed["interferers"].append(itf)
            prep = prepare_site(load_site(changed))
            t = time.perf_counter()
            r = replan_site(prep, req, current, ReplanMode("tolerance", 0.05), settings)
            wall = time.perf_counter() - t
            t = time.perf_counter()
            fresh = plan_site(prep, req, settings, with_sequences=False)
            fresh_wall = time.perf_counter() - t
            fresh_changes = sum(len(set(f.tolist()) - set(c.hop_set)) for f, c in zip(fresh.hop_sets, current))
            print(f"seed {seed}, {itf['id']:11s}: re-plan {wall:.2f} s (target < 2 s), {r.changes} changes "
                  f"(lower bound {r.lower_bound}, proven minimal {r.proven_minimal}), objective {r.objective:.4f} "
                  f"vs fresh {r.fresh.report.objective:.4f} (target {r.target:.4f}); a plan from scratch takes "
                  f"{fresh_wall:.2f} s and changes {fresh_changes} channels")


if __name__ == "__main__":
    main()
