"""GET /v1/profiles: the regulatory profiles and their rules."""

from __future__ import annotations

from flask.views import MethodView
from flask_smorest import abort
from marshmallow import fields

from cohop.api.blueprint import Blueprint
from cohop.api.schemas.assessment import BandOutSchema
from cohop.api.schemas.site import StrictSchema
from cohop.regulatory import PROFILES

blp = Blueprint("profiles", __name__, url_prefix="/v1", description="Regulatory profiles")


class RuleSchema(StrictSchema):  # cohop.regulatory.rules.Rule
    id = fields.String()
    title = fields.String()
    citation = fields.String()
    certainty = fields.String()
    summary = fields.String()


class ProfileSchema(StrictSchema):  # cohop.regulatory.profiles.Profile
    id = fields.String()
    name = fields.String()
    region = fields.String()
    band = fields.Nested(BandOutSchema, allow_none=True, metadata={"description": "null: the request gives it"})
    coordination_caution = fields.Boolean()
    rules = fields.List(fields.Nested(RuleSchema))


@blp.route("/profiles")
class Profiles(MethodView):
    @blp.response(200, ProfileSchema(many=True))
    def get(self):
        """List the regulatory profiles with every rule's citation and certainty."""
        return list(PROFILES.values())


@blp.route("/profiles/<profile_id>")
class OneProfile(MethodView):
    @blp.response(200, ProfileSchema)
    def get(self, profile_id):
        """One regulatory profile."""
        if profile_id not in PROFILES:
            abort(404, message=f"no profile {profile_id!r}")
        return PROFILES[profile_id]
