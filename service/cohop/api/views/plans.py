"""POST /v1/plans: assign hop sets to every system."""

from __future__ import annotations

from flask import current_app
from flask.views import MethodView

from cohop.api import solver_runner
from cohop.api.blueprint import Blueprint
from cohop.api.schemas.plan import PlanRequestSchema, PlanResponseSchema
from cohop.jobs.requests import PlanRequest

blp = Blueprint("plans", __name__, url_prefix="/v1", description="Plan hop sets")


@blp.route("/plans")
class Plans(MethodView):
    @blp.arguments(PlanRequestSchema)
    @blp.response(200, PlanResponseSchema)
    @blp.body_errors()
    @blp.solver_errors("plan")
    def post(self, req: PlanRequest):
        """Plan each system's hop set; returns the plan, its full assessment and the solver report."""
        config = current_app.config
        args = (req, solver_runner.solve_settings(config))
        if not config["COHOP_ISOLATE_SOLVES"]:
            args += (config.get("COHOP_PROGRESS_HOOK"),)
        return solver_runner.run("plan", solver_runner.dumped_plan, req.requirements.time_limit_s, *args)
