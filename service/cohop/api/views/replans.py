"""POST /v1/replans: change as few channels as possible after the site changed."""

from __future__ import annotations

from flask import current_app
from flask.views import MethodView

from cohop.api import solving
from cohop.api.blueprint import Blueprint
from cohop.api.schemas.plan import InfeasibleProblemSchema, ReplanRequestSchema, ReplanResponseSchema

blp = Blueprint("replans", __name__, url_prefix="/v1", description="Re-plan with few changes")


@blp.route("/replans")
class Replans(MethodView):
    @blp.arguments(ReplanRequestSchema)
    @blp.response(200, ReplanResponseSchema)
    @blp.alt_response(400, response="BAD_REQUEST")
    @blp.alt_response(413, response="REQUEST_ENTITY_TOO_LARGE")
    @blp.alt_response(415, response="UNSUPPORTED_MEDIA_TYPE")
    @blp.alt_response(422, schema=InfeasibleProblemSchema, content_type="application/problem+json",
                      description="Invalid request, or no re-plan meets the requirements (with the conflicting ones)")
    @blp.alt_response(503, response="SERVICE_UNAVAILABLE", headers={"Retry-After": {
        "description": "Seconds to wait before trying again", "schema": {"type": "integer"}}})
    def post(self, body):
        """Re-plan from the current plan: fewest changes within a tolerance, or best plan within a budget."""
        settings = solving.solve_settings(current_app.config)
        return solving.run("replan", solving.replan_job, body["site"], body["requirements"], body["current"],
                           body["mode"], settings)
