"""POST /v1/plans: assign hop sets to every system."""

from __future__ import annotations

from flask import current_app
from flask.views import MethodView

from cohop.api import solving
from cohop.api.blueprint import Blueprint
from cohop.api.schemas.plan import PlanRequestSchema, PlanResponseSchema

blp = Blueprint("plans", __name__, url_prefix="/v1", description="Plan hop sets")


@blp.route("/plans")
class Plans(MethodView):
    @blp.arguments(PlanRequestSchema)
    @blp.response(200, PlanResponseSchema)
    @blp.body_errors()
    @blp.solver_errors("plan")
    def post(self, body):
        """Plan each system's hop set; returns the plan, its full assessment and the solver report."""
        config = current_app.config
        args = (body["site"], body["requirements"], solving.solve_settings(config), body["detail"])
        if not config["COHOP_ISOLATE_SOLVES"]:
            args += (config.get("COHOP_PROGRESS_HOOK"),)
        return solving.run("plan", solving.plan_job, body["requirements"].time_limit_s, *args)
