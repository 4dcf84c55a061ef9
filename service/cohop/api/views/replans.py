"""POST /v1/replans: change as few channels as possible after the site changed."""

from __future__ import annotations

from flask import current_app
from flask.views import MethodView

from cohop.api import solver_runner
from cohop.api.blueprint import Blueprint
from cohop.api.schemas.replan import ReplanRequestSchema, ReplanResponseSchema
from cohop.jobs.requests import ReplanRequest

blp = Blueprint("replans", __name__, url_prefix="/v1", description="Re-plan with few changes")


@blp.route("/replans")
class Replans(MethodView):
    @blp.arguments(ReplanRequestSchema)
    @blp.response(200, ReplanResponseSchema)
    @blp.body_errors()
    @blp.solver_errors("re-plan")
    def post(self, req: ReplanRequest):
        """Re-plan from the current plan: fewest changes within a tolerance, or best plan within a budget."""
        settings = solver_runner.solve_settings(current_app.config)
        return solver_runner.run("replan", solver_runner.dumped_replan, req.requirements.time_limit_s, req, settings)
