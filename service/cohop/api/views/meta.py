"""GET /v1/health (liveness) and GET /v1/ready (readiness)."""

from __future__ import annotations

from flask import current_app
from flask.views import MethodView
from marshmallow import fields, validate

from cohop import __version__
from cohop.api import lifecycle, problems
from cohop.api.blueprint import Blueprint
from cohop.api.schemas.problem import ProblemSchema
from cohop.api.schemas.site import StrictSchema

blp = Blueprint("meta", __name__, url_prefix="/v1", description="Service health")

DRAINING = "urn:cohop:problem:draining"


class HealthSchema(StrictSchema):
    status = fields.String()
    version = fields.String()


class ReadySchema(StrictSchema):
    status = fields.String(metadata={"description": "ready"})
    solves_running = fields.Integer()
    max_concurrent_solves = fields.Integer(metadata={"description": "COHOP_MAX_CONCURRENT_SOLVES"})


class DrainingProblemSchema(ProblemSchema):
    state = fields.String(validate=validate.OneOf(["draining"]), metadata={
        "description": "draining: the server received SIGTERM; it still answers requests for COHOP_DRAIN_S "
                       "seconds, then lets in-flight ones finish and exits"})
    solves_running = fields.Integer()
    max_concurrent_solves = fields.Integer(metadata={"description": "COHOP_MAX_CONCURRENT_SOLVES"})


def _slots() -> dict:
    from cohop.api.solver_runner import slots

    return {"solves_running": slots(current_app).active,
            "max_concurrent_solves": current_app.config["COHOP_MAX_CONCURRENT_SOLVES"]}


@blp.route("/health")
class Health(MethodView):
    @blp.doc(security=[])
    @blp.response(200, HealthSchema)
    def get(self):
        """Liveness: the process answers."""
        return {"status": "ok", "version": __version__}


@blp.route("/ready")
class Ready(MethodView):
    @blp.doc(security=[])
    @blp.response(200, ReadySchema)
    @blp.alt_response(503, schema=DrainingProblemSchema, content_type=problems.PROBLEM_JSON,
                      description="Shutting down: send new work elsewhere (problem details with state draining)")
    def get(self):
        """Readiness: 503 from SIGTERM on, while the server drains and then finishes in-flight requests."""
        if lifecycle.is_draining():
            return problems.problem(503, "Shutting down", "this server received SIGTERM: send new work elsewhere; "
                                    "requests already sent are still answered", DRAINING, state="draining",
                                    **_slots())
        return {"status": "ready", **_slots()}
