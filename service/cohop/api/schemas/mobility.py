"""Response schemas of systems that move: dumps `cohop.mobility.SystemMobility`."""

from __future__ import annotations

from marshmallow import fields

from cohop.api.schemas.site import StrictSchema


def _p(description: str = "", **kwargs) -> fields.Float:
    return fields.Float(metadata={"description": description} if description else {}, **kwargs)


class PlaceSchema(StrictSchema):  # cohop.site.Position
    x_m = _p()
    y_m = _p()
    floor = fields.Integer()


class PositionFiguresSchema(StrictSchema):  # cohop.mobility.PositionFigures
    index = fields.Integer(metadata={"description": "Into the system's positions (area: grid points, x fastest)"})
    position = fields.Nested(PlaceSchema)
    collision_probability = _p("per hop, with every source at its worst position towards this one")
    attempt_loss_probability = _p()
    residual_loss_probability = _p()
    expected_attempts = _p()


class MeanFiguresSchema(StrictSchema):  # cohop.mobility.MeanFigures
    collision_probability = _p("per hop, mean over the sampled positions")
    attempt_loss_probability = _p()
    residual_loss_probability = _p()
    expected_attempts = _p()


class MobilitySchema(StrictSchema):  # cohop.mobility.SystemMobility
    policy = fields.String(metadata={"description": "The site's mobility_policy: worst or mean"})
    positions_sampled = fields.Integer()
    positions_matter = fields.Boolean(metadata={
        "description": "false when every coupling loss and interferer level into it is given explicitly"})
    worst_position = fields.Nested(PositionFiguresSchema, attribute="worst", allow_none=True, metadata={
        "description": "Where the system is worst off, with its figures there"})
    mean = fields.Nested(MeanFiguresSchema, allow_none=True, metadata={"description": "Policy mean only"})
    note = fields.String()
