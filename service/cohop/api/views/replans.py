"""POST /v1/replans: change as few channels as possible after the site changed."""

from __future__ import annotations

from flask import current_app
from flask.views import MethodView

from cohop.api import solving
from cohop.api.blueprint import Blueprint
from cohop.api.schemas.plan import ReplanRequestSchema, ReplanResponseSchema

blp = Blueprint("replans", __name__, url_prefix="/v1", description="Re-plan with few changes")


@blp.route("/replans")
class Replans(MethodView):
    @blp.arguments(ReplanRequestSchema)
    @blp.response(200, ReplanResponseSchema)
    @blp.body_errors()
    @blp.solver_errors("re-plan")
    def post(self, body):
        """Re-plan from the current plan: fewest changes within a tolerance, or best plan within a budget."""
        settings = solving.solve_settings(current_app.config)
        return solving.run("replan", solving.replan_job, body["requirements"].time_limit_s, body["site"],
                           body["requirements"], body["current"], body["mode"], settings)
