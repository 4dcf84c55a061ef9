"""Running plan and re-plan solves for the views: slots, isolation, metrics, errors.

The jobs are module-level functions of plain, picklable arguments that return
the finished answer dict, so they run the same in-process (tests, command
line) or in a solver process (`cohop.isolation`, production).
"""

from __future__ import annotations

import time

from flask import current_app

from cohop.api import problems
from cohop.errors import SolverBusy, SolverCrashed
from cohop.isolation import SolveSlots, run_isolated
from cohop.planning.solve import SolveSettings


def solve_settings(config) -> SolveSettings:
    return SolveSettings(solver_threads=config["COHOP_SOLVER_THREADS"], max_solve_s=config["COHOP_MAX_SOLVE_S"],
                         max_products=config["COHOP_MAX_PRODUCTS"], deterministic=config["COHOP_DETERMINISTIC"])


def plan_job(site, requirements, settings, detail, progress=None) -> dict:
    from cohop.api.present import plan_dict
    from cohop.planning.run import run_plan

    return plan_dict(run_plan(site, requirements, settings, progress, detail))


def replan_job(site, requirements, current, mode, settings) -> dict:
    from cohop.api.present import replan_dict
    from cohop.planning.run import run_replan

    return replan_dict(run_replan(site, requirements, current, mode, settings), mode)


def slots(app) -> SolveSlots:
    ext = app.extensions.setdefault("cohop", {})
    if "slots" not in ext:
        ext["slots"] = SolveSlots(app.config["COHOP_MAX_CONCURRENT_SOLVES"])
    return ext["slots"]


def run(kind: str, job, *args):
    """Run a solve job under the app's slots; isolated in its own process when configured."""
    app = current_app._get_current_object()
    metrics = app.extensions["cohop"].get("metrics")
    slot = slots(app)
    if not slot.try_acquire():
        if metrics:
            metrics.rejections.labels(reason="solver busy").inc()
        raise SolverBusy(app.config["COHOP_MAX_CONCURRENT_SOLVES"])
    started = time.monotonic()
    status = "error"
    try:
        if metrics:
            metrics.solves_in_progress.inc()
        if app.config["COHOP_ISOLATE_SOLVES"]:
            result = run_isolated(job, *args, timeout_s=app.config["COHOP_MAX_SOLVE_S"] * 4 + 30)
        else:
            result = job(*args)
        status = result["solver"]["status"] if "solver" in result else "feasible"
        return result
    except SolverCrashed:
        status = "crashed"
        raise
    finally:
        if metrics:
            metrics.solves_in_progress.dec()
            metrics.solve_seconds.labels(kind=kind, status=status).observe(time.monotonic() - started)
        slot.release()


def register(app) -> None:
    @app.errorhandler(SolverBusy)
    def _busy(err):
        after = str(app.config["COHOP_RETRY_AFTER_S"])
        return problems.problem(503, "Solver busy", "every solve slot is taken; try again after Retry-After "
                                "seconds", "urn:cohop:problem:solver-busy", headers={"Retry-After": after})

    @app.errorhandler(SolverCrashed)
    def _crashed(err):
        return problems.problem(500, "Solver failed", f"{err}; the service is still up, send the request again",
                                "urn:cohop:problem:solver-failed")
