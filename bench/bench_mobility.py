"""Benchmark: systems that move, on the container-terminal sample.

Prints the assessment's time with the sample's moving crane, with four systems moving over areas (the site's
cap of sampled positions, `limits.MAX_SAMPLED_POSITIONS`, nearly used), and the baseline in the same run: the
same site with every system fixed. Then the plan's wall time (in-process app, solves in-process) for time
limits of 1, 2 and 5 s on the fixed and the moving site. Prints figures; asserts nothing.
"""

from __future__ import annotations

import copy
import time

import _common  # noqa: F401  (sets sys.path)
from _common import machine, median_time

from cohop import limits, samples
from cohop.api.app import create_app
from cohop.assess import assess_site
from cohop.jobs.answers import assessment_answer
from cohop.prepare import prepare_site
from cohop.site_rules import load_site


def _fixed(site: dict) -> dict:
    out = copy.deepcopy(site)
    for s in out["systems"]:
        if "positions" in s:
            places = s.pop("positions")
            s["position"] = places[len(places) // 2]
    return out


def _areas(site: dict, count: int, rows: int) -> dict:
    """The first `count` systems each moving over a 20 x rows grid (10 m step)."""
    out = copy.deepcopy(site)
    for i, s in enumerate(out["systems"][:count]):
        s.pop("position", None)
        s.pop("positions", None)
        s["area"] = {"x_min_m": 100.0 * i, "x_max_m": 100.0 * i + 190, "y_min_m": 0.0,
                     "y_max_m": 10.0 * (rows - 1), "step_m": 10.0}
    return out


def _assess(body: dict):
    return assessment_answer(assess_site(prepare_site(load_site(body))), caution=False)


def main() -> None:
    print(f"machine: {machine()}")
    sample = samples.load("container_terminal")["site"]
    sites = {"fixed (baseline)": _fixed(sample), "sample (crane: 5 positions)": sample,
             "4 areas of 20 x 6": _areas(sample, 4, 6)}
    base = None
    for name, body in sites.items():
        n = sum(len(s.sampled_positions()) for s in load_site(body).systems if s.moves)
        t = median_time(lambda: _assess(body), 3)
        base = base or t
        print(f"assess {name:30s} moving positions {n:4d}  {t * 1e3:8.1f} ms  x{t / base:5.1f} of fixed")
    print(f"(cap: {limits.MAX_SAMPLED_POSITIONS} sampled positions in all)")
    client = create_app().test_client()
    for name in ("fixed (baseline)", "4 areas of 20 x 6"):
        body = sites[name]
        client.post("/v1/plans", json={"site": body, "search": {"time_limit_s": 1.0, "seed": 0}})  # warm up
        for limit in (1.0, 2.0, 5.0):
            t = time.perf_counter()
            resp = client.post("/v1/plans", json={"site": body, "search": {"time_limit_s": limit, "seed": 0}})
            wall = time.perf_counter() - t
            print(f"plan {name:30s} T = {limit:3.0f} s  status {resp.status_code}  wall {wall:5.2f} s  "
                  f"(target max(1.1 T, T + 1 s) = {max(1.1 * limit, limit + 1):.1f} s)")


if __name__ == "__main__":
    main()
