"""POST /v1/plans: assign hop sets to every system."""

from __future__ import annotations

from flask import current_app
from flask.views import MethodView

from cohop.api.blueprint import Blueprint
from cohop.api.present import plan_dict
from cohop.api.schemas.plan import InfeasibleProblemSchema, PlanRequestSchema, PlanResponseSchema
from cohop.planning.run import run_plan
from cohop.planning.solve import SolveSettings

blp = Blueprint("plans", __name__, url_prefix="/v1", description="Plan hop sets")


def solve_settings(config) -> SolveSettings:
    return SolveSettings(num_workers=config["COHOP_SOLVER_WORKERS"], max_time_s=config["COHOP_MAX_SOLVE_S"],
                         max_products=config["COHOP_MAX_PRODUCTS"], deterministic=config["COHOP_DETERMINISTIC"])


@blp.route("/plans")
class Plans(MethodView):
    @blp.arguments(PlanRequestSchema)
    @blp.response(200, PlanResponseSchema)
    @blp.alt_response(400, response="BAD_REQUEST")
    @blp.alt_response(413, response="REQUEST_ENTITY_TOO_LARGE")
    @blp.alt_response(415, response="UNSUPPORTED_MEDIA_TYPE")
    @blp.alt_response(422, schema=InfeasibleProblemSchema, content_type="application/problem+json",
                      description="Invalid request, or no plan meets the requirements (with the conflicting ones)")
    def post(self, body):
        """Plan each system's hop set; returns the plan, its full assessment and the solver report."""
        config = current_app.config
        result = run_plan(body["site"], body["requirements"], solve_settings(config),
                          config.get("COHOP_PROGRESS_HOOK"), body["detail"])
        return plan_dict(result)
