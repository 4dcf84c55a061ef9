"""Benchmark: the plan under each objective, same time limit, on the medium bench site and the samples.

Prints, per site and objective, the returned plan's priority-weighted residual loss after retries, its
weighted and worst per-hop collision (evaluated figures), its worst share of a loss ceiling and the wall
time. Asserts nothing. The sites have no ceilings; with --ceiling X every system gets max_attempt_loss X
and worst_margin is planned too. Usage:

    python bench/bench_objectives.py [--limit 10] [--sites medium,water_works,...] [--ceiling 0.5]
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import time

import _common  # noqa: F401
from _common import ROOT, machine

SITES = ("medium", "water_works", "container_terminal", "open_pit_mine")


def _body(name: str) -> tuple[dict, int | None]:
    from bench import sitegen

    if name in sitegen.SIZES:
        return sitegen.generate(name, seed=1, with_hop_sets=False), sitegen.SIZES[name][4]
    body = json.loads((ROOT / "sample_requests" / f"{name}.json").read_text())["site"]
    for s in body["systems"]:
        s.pop("hop_set", None)
    return body, None


def _run_one(name: str, objective: str, limit: float, ceiling: float | None) -> dict:
    from cohop.planning.engine import SolveSettings
    from cohop.planning.objectives import objective_values, plan_for_objective
    from cohop.planning.requirements import PlanRequirements, SystemRequirement
    from cohop.prepare import prepare_site
    from cohop.site_rules import load_site

    body, per = _body(name)
    site = load_site(body)
    counts = {} if per is None else {"min_channels": per, "max_channels": per}
    if ceiling is not None:
        counts["max_attempt_loss"] = ceiling
    systems = tuple(SystemRequirement(system=s.id, **counts) for s in site.systems) if counts else ()
    req = PlanRequirements(systems=systems, objective=objective, time_limit_s=limit, seed=1)
    t = time.perf_counter()
    result = plan_for_objective(prepare_site(site), req, SolveSettings(solver_threads=2, max_solve_s=60.0))
    wall = time.perf_counter() - t
    v = objective_values(result.assessment, req)
    return {"margin": v.worst_margin, "residual": v.residual_loss, "weighted": v.weighted_sum, "worst": v.worst_system,
            "worst_id": v.worst_system_id, "wall_s": wall, "valid": not result.violations,
            "stopped": result.report.stopped_by_wall_clock}


def _child(name: str, objective: str, limit: float, ceiling: float | None) -> dict:
    cmd = [sys.executable, __file__, "--one", name, objective, str(limit), str(ceiling)]
    done = subprocess.run(cmd, capture_output=True, text=True, check=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def main(limit: float, names, ceiling: float | None) -> None:
    from cohop.planning.requirements import OBJECTIVES

    print(f"machine: {machine()}; time limit {limit:g} s per plan; "
          + ("no ceilings" if ceiling is None else f"every system max_attempt_loss {ceiling:g}"))
    print(f"{'site':28} {'objective':14} {'w. residual':>12} {'w. collision':>12} {'worst coll.':>11} "
          f"{'worst share':>11} {'wall/limit':>10}")
    for name in names:
        for objective in OBJECTIVES if ceiling is not None else [o for o in OBJECTIVES if o != "worst_margin"]:
            r = _child(name, objective, limit, ceiling)
            flag = "" if r["valid"] else " INVALID"
            flag += " (wall clock stopped a phase)" if r["stopped"] else ""
            print(f"{name:28} {objective:14} {r['residual']:12.6g} {r['weighted']:12.6g} {r['worst']:11.6g} "
                  f"{'-' if r['margin'] is None else format(r['margin'], '11.6g'):>11} "
                  f"{r['wall_s'] / limit:10.2f}{flag}", flush=True)


if __name__ == "__main__":
    if len(sys.argv) > 1 and sys.argv[1] == "--one":
        print(json.dumps(_run_one(sys.argv[2], sys.argv[3], float(sys.argv[4]),
                                  None if sys.argv[5] == "None" else float(sys.argv[5]))))
    else:
        p = argparse.ArgumentParser()
        p.add_argument("--limit", type=float, default=10.0)
        p.add_argument("--sites", default=",".join(SITES))
        p.add_argument("--ceiling", type=float, default=None)
        a = p.parse_args()
        main(a.limit, a.sites.split(","), a.ceiling)
