"""Benchmark: do plans and re-plans keep their time limits? Wall time / T on every sample and bench site.

Each request goes through the app as production runs it: the in-process WSGI app with
COHOP_ISOLATE_SOLVES on (each solve in its own process, answers pickled back, schema dump and JSON
included), timed around the whole request. With --server, one pass against the real gunicorn server too.
Target (issue 9): every wall time / T at most max(1.1, 1 + 1 s / T). Prints figures; asserts nothing.

    python bench/bench_timelimits.py                   # T = 1, 5, 10; median of --repeat runs (default 3)
    python bench/bench_timelimits.py --repeat 1 --limits 1 5
    python bench/bench_timelimits.py --server          # also the real server, one run each
    python bench/bench_timelimits.py --phases          # what the phases cost vs the planner's estimates

Every request asks for all baselines, the default sequence packets and channel detail (the heaviest
answer). Bench sites give every system the size bench_plan.py uses.
"""

from __future__ import annotations

import argparse
import copy
import json
import os
import statistics
import time

import _common  # noqa: F401
from _common import machine

from bench import sitegen

SAMPLES = ("water_works", "container_terminal", "open_pit_mine")
SITES = SAMPLES + tuple(sitegen.SIZES)
REPLAN_SAMPLE = "water_works_replan"


def plan_body(name: str, limit: float) -> dict:
    from cohop import samples

    if name in sitegen.SIZES:
        site = sitegen.generate(name, seed=0, with_hop_sets=False)
        per = sitegen.SIZES[name][4]
        body = {"site": site, "requirements": {"systems": [{"system": s["id"], "min_channels": per,
                                                            "max_channels": per} for s in site["systems"]]}}
    else:
        body = samples.load(name)
    body["search"] = {"time_limit_s": limit}
    body["baselines"] = ["all"]
    return body


def replan_body(limit: float) -> dict:
    from cohop import samples

    body = samples.load(REPLAN_SAMPLE)
    body["search"] = {**body.get("search", {}), "time_limit_s": limit}
    return body


def target(limit: float) -> float:
    return max(1.1 * limit, limit + 1.0)


def _post(send, path: str, body: dict) -> tuple[float, int, dict]:
    t = time.perf_counter()
    status, answer = send(path, body)
    return time.perf_counter() - t, status, answer


def _solver_of(answer: dict) -> dict:
    return answer.get("solver") or answer.get("time") or {}


def _row(name: str, limit: float, walls: list[float], status: int, answer: dict) -> str:
    wall = statistics.median(walls)
    s = _solver_of(answer)
    ok = "ok" if wall <= target(limit) else "OVER"
    stop = "wall-clock stop" if s.get("stopped_by_wall_clock") else ""
    extra = f"{s.get('status', '')} gap {s['gap']:.3g}" if s.get("gap") is not None else s.get("status", "")
    return (f"  {name:27s} T={limit:4g}  wall {wall:6.2f} s (runs {', '.join(f'{w:.2f}' for w in walls)})  "
            f"wall/T {wall / limit:5.2f}  target {target(limit) / limit:4.2f} {ok:4s}  HTTP {status}  {extra} {stop}")


def run_table(send, limits, repeat: int, label: str) -> None:
    load = ", ".join(f"{x:.1f}" for x in os.getloadavg())
    print(f"\n== {label}: wall time / T (median of {repeat}; load average before: {load}) ==")
    for name in SITES:
        for limit in limits:
            walls, status, answer = [], 0, {}
            for _ in range(repeat):
                w, status, answer = _post(send, "/v1/plans", plan_body(name, limit))
                walls.append(w)
            print(_row(name, limit, walls, status, answer), flush=True)
    for limit in limits:
        walls, status, answer = [], 0, {}
        for _ in range(repeat):
            w, status, answer = _post(send, "/v1/replans", replan_body(limit))
            walls.append(w)
        print(_row(f"re-plan {REPLAN_SAMPLE}", limit, walls, status, answer), flush=True)


def in_process_sender():
    from cohop.api import create_app
    from cohop.isolation import warm

    app = create_app({"TESTING": True, "COHOP_ISOLATE_SOLVES": True, "COHOP_WORK_SPEED": 0.0})  # as production
    warm()  # as a production worker does when it starts: the fork server loads the solver modules once
    client = app.test_client()

    def send(path, body):
        r = client.post(path, json=body)
        return r.status_code, r.get_json()
    return send


def server_table(limits) -> None:
    import requests

    from tests.production.procs import Server

    with Server(COHOP_SOLVER_THREADS=2, COHOP_MAX_SOLVE_S=60, COHOP_GRACEFUL_TIMEOUT_S=90) as server:
        def send(path, body):
            r = requests.post(server.url + path, json=body, timeout=120)
            return r.status_code, r.json()
        run_table(send, limits, 1, "real server (gunicorn, one worker, 2 solver threads)")


def phases() -> None:
    """Each phase's measured cost beside the planner's estimate of it (best of 3)."""
    import pickle

    import numpy as np

    from cohop.api.schemas.plan import PlanResponseSchema
    from cohop.jobs.plan import plan_answer
    from cohop.jobs.requests import load_plan_request
    from cohop.assess import assess_site
    from cohop import cpsat
    from cohop.planning import costs, model, search
    from cohop.planning.instance import build_instance
    from cohop.planning.linear import hop_sets_of
    from cohop.planning.engine import SolveSettings, _baselines, plan_site
    from cohop.prepare import prepare_site
    from cohop.sequences.report import plan_sequences, sequence_work

    def best(fn, n=3):
        out, times = None, []
        for _ in range(n):
            t = time.perf_counter()
            out = fn()
            times.append(time.perf_counter() - t)
        return out, min(times)

    print("\n== phases: measured (best of 3) / estimated seconds ==")
    for name in SITES:
        body = plan_body(name, 10.0)
        t = time.perf_counter()
        req = load_plan_request(copy.deepcopy(body))
        prep = prepare_site(req.site)
        inst = build_instance(prep, req.requirements)
        x = search.improve(inst, search.greedy(inst))
        before = time.perf_counter() - t
        hop_sets = hop_sets_of(x)
        kicks = 100
        _, t_kicks = best(lambda: search.iterated(inst, x, kicks, 0), 1)
        lines = [f"before the search {before:.3f} / {costs.before_search_s(inst):.3f}",
                 f"kick {1e3 * t_kicks / kicks:.2f} ms / {1e3 / search.kick_budget(inst, 1.0):.2f} ms"]
        for limit in (1.0, 10.0):
            work = sequence_work(prep, inst.sizes, 5000, costs.SEQUENCE_SHARE * limit)
            seqs, t_seq = best(lambda: plan_sequences(prep, hop_sets, 0, 5000, work))
            lines.append(f"sequences T={limit:g} ({work.run_phases} offsets, {work.packets} packets) "
                         f"{t_seq:.3f} / {work.estimate_s:.3f}")
        a, t_assess = best(lambda: assess_site(prep, hop_sets=hop_sets, detail="channel", origin="plan",
                                               sequences=seqs.orders))
        lines.append(f"assessment {t_assess:.3f} / {costs.assessment_s(inst.n_systems, int(inst.sizes.sum())):.3f}")
        _, t_base = best(lambda: _baselines(inst, x))
        lines.append(f"baselines {t_base:.3f} / {costs.baselines_s(inst):.3f}")
        answer = plan_answer(plan_site(prep, req.requirements, SolveSettings(), detail="channel"))
        _, t_answer = best(lambda: json.dumps(pickle.loads(pickle.dumps(PlanResponseSchema().dump(answer)))))
        est_answer = costs.ANSWER_PER_SYSTEM_CHANNEL_S * inst.n_systems * inst.n_channels
        lines.append(f"answer {t_answer:.3f} / {est_answer:.3f}")
        products = model.product_count(inst)
        if products <= SolveSettings().max_products:
            (m, mv, objective, scale), t_build = best(lambda: model.full_model(inst, x), 1)
            model.minimise(m, mv, inst, objective, scale)
            from ortools.sat.python import cp_model

            solver = cp_model.CpSolver()
            p = solver.parameters
            p.num_workers, p.interleave_search, p.interleave_batch_size = 2, True, 2
            p.max_deterministic_time = 0.5
            solver.solve(m)
            lines.append(f"CP-SAT build {t_build:.3f} / {products * cpsat.BUILD_S_PER_PRODUCT:.3f}, "
                         f"{solver.deterministic_time / max(solver.wall_time, 1e-9):.2f} units/s "
                         f"(calibrated {cpsat.DETERMINISTIC_UNITS_PER_SECOND})")
        print(f"{name} ({inst.n_systems} systems x {inst.n_channels} channels, {int(np.sum(inst.sizes))} held):")
        for line in lines:
            print("    " + line, flush=True)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--limits", type=float, nargs="+", default=[1.0, 5.0, 10.0])
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--server", action="store_true")
    parser.add_argument("--phases", action="store_true")
    args = parser.parse_args()
    print(f"machine: {machine()}")
    if args.phases:
        phases()
        return
    run_table(in_process_sender(), args.limits, args.repeat, "in-process app, solves isolated as in production")
    if args.server:
        server_table(args.limits)


if __name__ == "__main__":
    main()
