"""POST /v1/replans: change as few channels as possible after the site changed."""

from __future__ import annotations

from flask import current_app
from flask.views import MethodView

from cohop.api.blueprint import Blueprint
from cohop.api.present import replan_dict
from cohop.api.schemas.plan import InfeasibleProblemSchema, ReplanRequestSchema, ReplanResponseSchema
from cohop.api.views.plans import solve_settings
from cohop.planning.run import run_replan

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
    def post(self, body):
        """Re-plan from the current plan: fewest changes within a tolerance, or best plan within a budget."""
        result = run_replan(body["site"], body["requirements"], body["current"], body["mode"],
                            solve_settings(current_app.config))
        return replan_dict(result, body["mode"])
