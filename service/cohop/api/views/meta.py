"""GET /v1/health (liveness) and GET /v1/ready (readiness)."""

from __future__ import annotations

from flask import current_app
from flask.views import MethodView
from marshmallow import fields

from cohop import __version__
from cohop.api import lifecycle
from cohop.api.blueprint import Blueprint
from cohop.api.schemas.site import StrictSchema

blp = Blueprint("meta", __name__, url_prefix="/v1", description="Service health")


class HealthSchema(StrictSchema):
    status = fields.String()
    version = fields.String()


class ReadySchema(StrictSchema):
    status = fields.String(metadata={"description": "ready, or draining (shutting down)"})
    solves_running = fields.Integer()
    solve_slots = fields.Integer()


@blp.route("/health")
class Health(MethodView):
    @blp.response(200, HealthSchema)
    def get(self):
        """Liveness: the process answers."""
        return {"status": "ok", "version": __version__}


@blp.route("/ready")
class Ready(MethodView):
    @blp.response(200, ReadySchema)
    @blp.alt_response(503, response="SERVICE_UNAVAILABLE")
    def get(self):
        """Readiness: fails while the process is shutting down and cannot take work."""
        from cohop.api.solving import slots

        if lifecycle.DRAINING.is_set():
            from flask_smorest import abort

            abort(503, message="shutting down: send new work elsewhere")
        return {"status": "ready", "solves_running": slots(current_app).active,
                "solve_slots": current_app.config["COHOP_MAX_CONCURRENT_SOLVES"]}
