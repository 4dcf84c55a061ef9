"""POST /v1/plans: assign hop sets to every system."""

from __future__ import annotations

from flask import current_app
from flask.views import MethodView

from cohop.api import solving
from cohop.api.blueprint import Blueprint
from cohop.api.schemas.plan import InfeasibleProblemSchema, PlanRequestSchema, PlanResponseSchema

blp = Blueprint("plans", __name__, url_prefix="/v1", description="Plan hop sets")

solve_settings = solving.solve_settings  # kept for importers


@blp.route("/plans")
class Plans(MethodView):
    @blp.arguments(PlanRequestSchema)
    @blp.response(200, PlanResponseSchema)
    @blp.alt_response(400, response="BAD_REQUEST")
    @blp.alt_response(413, response="REQUEST_ENTITY_TOO_LARGE")
    @blp.alt_response(415, response="UNSUPPORTED_MEDIA_TYPE")
    @blp.alt_response(422, schema=InfeasibleProblemSchema, content_type="application/problem+json",
                      description="Invalid request, or no plan meets the requirements (with the conflicting ones)")
    @blp.alt_response(503, response="SERVICE_UNAVAILABLE", headers={"Retry-After": {
        "description": "Seconds to wait before trying again", "schema": {"type": "integer"}}})
    def post(self, body):
        """Plan each system's hop set; returns the plan, its full assessment and the solver report."""
        config = current_app.config
        args = (body["site"], body["requirements"], solving.solve_settings(config), body["detail"])
        if not config["COHOP_ISOLATE_SOLVES"]:
            args += (config.get("COHOP_PROGRESS_HOOK"),)
        return solving.run("plan", solving.plan_job, *args)
