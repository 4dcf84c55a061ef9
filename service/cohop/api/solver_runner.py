"""Running plan and re-plan solves for the views: slots, the deadline, isolation, metrics, errors.

`dumped_plan` and `dumped_replan` run the job and dump its answer with the
response schema, returning plain JSON data: module-level functions of plain,
picklable arguments (the request dataclasses), so they run the same in-process
(tests, command line) or in a solver process (`cohop.isolation`, production).
The answer is dumped where it is made because the result object holds the
prepared site (numpy arrays, and profiles whose checks are closures, which do
not pickle), while the dumped answer pickles in milliseconds (the large bench
site's, 1.5 MB of JSON: 4 ms each way). Each gets the request's `Deadline`
first: made here, when the effective limit is known (the request's, clamped by
COHOP_MAX_SOLVE_S), counted from the request's arrival. In a solver process
the parent also kills the solve at the hard cap (`hard_cap_s`) and when the
client has gone (SolveAbandoned).
"""

from __future__ import annotations

import logging
import time

from flask import Response, current_app, g, request

from cohop.api import problems
from cohop.api.schemas.plan import PlanResponseSchema
from cohop.api.schemas.replan import ReplanResponseSchema
from cohop.errors import SolveAbandoned, SolverBusy, SolverCrashed
from cohop.isolation import SolveSlots, run_isolated
from cohop.jobs.plan import run_plan
from cohop.jobs.replan import run_replan
from cohop.jobs.requests import PlanRequest, ReplanRequest
from cohop.deadline import Deadline
from cohop.planning import calibration
from cohop.planning.engine import SolveSettings

log = logging.getLogger("cohop.solver")

#: The solver process is killed this long after the request's effective limit (a runaway stop; the
#: solver keeps the limit itself): HARD_CAP_GRACE_S plus HARD_CAP_GRACE_SHARE of the limit. A site whose
#: closing phases alone outlast the limit moves the cap to its expected end plus the same grace, up to
#: HARD_CAP_LATEST_S after the request arrived (below gunicorn's worker timeout).
HARD_CAP_GRACE_S = 3.0
HARD_CAP_GRACE_SHARE = 0.25


def grace_s(limit_s: float) -> float:
    return HARD_CAP_GRACE_S + HARD_CAP_GRACE_SHARE * limit_s


def hard_cap_s(limit_s: float) -> float:
    return limit_s + grace_s(limit_s)


def latest_cap_s(max_solve_s: float) -> float:
    """The latest a solve may run: gunicorn's worker timeout (`Settings.request_timeout_s`) less 10 s."""
    return 2 * max_solve_s + 20


def solve_settings(config) -> SolveSettings:
    return SolveSettings(solver_threads=config["COHOP_SOLVER_THREADS"], max_solve_s=config["COHOP_MAX_SOLVE_S"],
                         max_products=config["COHOP_MAX_PRODUCTS"], deterministic=config["COHOP_DETERMINISTIC"],
                         work_speed=config["COHOP_WORK_SPEED"])


def dumped_plan(deadline: Deadline, req: PlanRequest, settings: SolveSettings, progress=None) -> dict:
    """The plan job's answer, dumped by its response schema."""
    calibrated(deadline, settings)
    return PlanResponseSchema().dump(run_plan(req, settings, progress, deadline))


def dumped_replan(deadline: Deadline, req: ReplanRequest, settings: SolveSettings) -> dict:
    """The re-plan job's answer, dumped by its response schema."""
    calibrated(deadline, settings)
    return ReplanResponseSchema().dump(run_replan(req, settings, deadline))


def calibrated(deadline: Deadline, settings: SolveSettings) -> None:
    """Give the deadline this machine's work speed (in the solver process: the fork server measured it before
    forking). A process that has to measure first (an in-process app's first plan) does not charge the
    measurement to the request's limit: the deadline starts that much later."""
    started = time.monotonic()
    deadline.work_speed = calibration.speed(settings.work_speed, settings.solver_threads)
    deadline.speed_without_cp_sat = calibration.speed_without_cp_sat(settings.work_speed, settings.solver_threads)
    deadline.started += time.monotonic() - started


def slots(app) -> SolveSlots:
    ext = app.extensions.setdefault("cohop", {})
    if "slots" not in ext:
        ext["slots"] = SolveSlots(app.config["COHOP_MAX_CONCURRENT_SOLVES"])
    return ext["slots"]


def run(kind: str, job, time_limit_s: float, *args) -> Response:
    """Run `job(deadline, *args)` under the app's slots, isolated in its own process when configured; its
    answer (already dumped by the response schema) as the response."""
    app = current_app._get_current_object()
    metrics = app.extensions["cohop"].get("metrics")
    slot = slots(app)
    if not slot.try_acquire():
        if metrics:
            metrics.rejections.labels(reason="solver busy").inc()
        raise SolverBusy(app.config["COHOP_MAX_CONCURRENT_SOLVES"])
    deadline = Deadline.of(time_limit_s, app.config["COHOP_MAX_SOLVE_S"], started=g.get("cohop_request_start"))
    started = time.monotonic()
    status = "error"
    try:
        if metrics:
            metrics.solves_in_progress.inc()
        if app.config["COHOP_ISOLATE_SOLVES"]:
            result = run_isolated(job, deadline, *args, kill_at=deadline.started + hard_cap_s(deadline.limit_s),
                                  client=request.environ.get("gunicorn.socket"), grace_s=grace_s(deadline.limit_s),
                                  latest=deadline.started + latest_cap_s(app.config["COHOP_MAX_SOLVE_S"]))
        else:
            result = job(deadline, *args)
        status = result["solver"]["status"] if "solver" in result else "feasible"
        return app.json.response(result)
    except SolveAbandoned:
        status = "abandoned"
        raise
    except SolverCrashed:
        status = "crashed"
        raise
    finally:
        if metrics:
            metrics.solves_in_progress.dec()
            metrics.solve_seconds.labels(kind=kind, status=status).observe(time.monotonic() - started)
        slot.release()


def register(app) -> None:
    @app.before_request
    def _arrived():
        g.cohop_request_start = time.monotonic()  # a solve's deadline counts from here

    @app.errorhandler(SolverBusy)
    def _busy(err):
        after = str(app.config["COHOP_RETRY_AFTER_S"])
        return problems.problem(503, "Solver busy", "every solve slot is taken; try again after Retry-After "
                                "seconds", "urn:cohop:problem:solver-busy", headers={"Retry-After": after})

    @app.errorhandler(SolverCrashed)
    def _crashed(err):
        return problems.problem(500, "Solver failed", f"{err}; the service is still up, send the request again",
                                "urn:cohop:problem:solver-failed")

    @app.errorhandler(SolveAbandoned)
    def _abandoned(err):
        # Nobody reads this answer (the client has gone); 499 is the access log's usual mark for it.
        return problems.problem(499, "Client closed request", str(err), "urn:cohop:problem:solve-abandoned")
