"""GET /v1/health."""

from __future__ import annotations

from flask.views import MethodView
from marshmallow import fields

from cohop import __version__
from cohop.api.blueprint import Blueprint
from cohop.api.schemas.site import StrictSchema

blp = Blueprint("meta", __name__, url_prefix="/v1", description="Service health")


class HealthSchema(StrictSchema):
    status = fields.String()
    version = fields.String()


@blp.route("/health")
class Health(MethodView):
    @blp.response(200, HealthSchema)
    def get(self):
        """Liveness: the process answers."""
        return {"status": "ok", "version": __version__}
