"""POST /v1/assessments: evaluate hop sets on a site."""

from __future__ import annotations

from flask import current_app
from flask.views import MethodView

from cohop.api.blueprint import Blueprint
from cohop.api.schemas.assessment import AssessmentRequestSchema, AssessmentResponseSchema
from cohop.jobs.assess import run_assessment
from cohop.jobs.requests import AssessmentRequest

blp = Blueprint("assessments", __name__, url_prefix="/v1", description="Predict collisions, losses and compliance")


@blp.route("/assessments")
class Assessments(MethodView):
    @blp.arguments(AssessmentRequestSchema)
    @blp.response(200, AssessmentResponseSchema)
    @blp.body_errors()
    def post(self, req: AssessmentRequest):
        """Evaluate each system's hop set: collisions by source and channel, losses, compliance."""
        return run_assessment(req, current_app.config["COHOP_MAX_SIMULATED_ATTEMPTS"])
