"""POST /v1/hop-tables: the hop tables of a plan or re-plan answer on its site (README, "Hop tables").

Stateless and solver-free: the client sends the site and the answer it got from /v1/plans or /v1/replans
(the whole answer, or only its `plan`, `sequences` and `cautions`); `?format=csv` answers the CSV form.
"""

from __future__ import annotations

import marshmallow as ma
from flask import Response
from flask.views import MethodView
from marshmallow import fields, validate

from cohop import limits
from cohop.api.blueprint import Blueprint
from cohop.api.schemas.fields import IDENTIFIER, List, Number, Text
from cohop.api.schemas.site import SiteSchema, StrictSchema, channel_index
from cohop.errors import SiteError
from cohop.jobs.hop_tables import ExportError, Numbering, SystemInfo, hop_table_document, tables_csv

blp = Blueprint("hop_tables", __name__, url_prefix="/v1", description="Hop tables to load into radios")


class _AnswerPart(ma.Schema):
    class Meta:
        unknown = ma.EXCLUDE  # the rest of a saved answer is ignored


class AnsweredHopSetSchema(_AnswerPart):
    id = Text(required=True, validate=IDENTIFIER)
    hop_set = List(channel_index(), required=True, min_length=1, max_length=limits.MAX_CHANNELS)


class AnsweredOrderSchema(_AnswerPart):
    id = Text(required=True, validate=IDENTIFIER)
    channels = List(channel_index(), required=True, min_length=1, max_length=limits.MAX_SEQUENCE_HOPS)
    period_s = Number(limits.SEQUENCE_PERIOD_S, load_default=None)


class AnsweredOrdersSchema(_AnswerPart):
    systems = List(fields.Nested(AnsweredOrderSchema), load_default=list, max_length=limits.MAX_SYSTEMS)


class AnsweredPlanSchema(_AnswerPart):
    plan = List(fields.Nested(AnsweredHopSetSchema), required=True, max_length=limits.MAX_SYSTEMS)
    sequences = fields.Nested(AnsweredOrdersSchema, load_default=None, allow_none=True)
    cautions = List(fields.String(), load_default=list, max_length=64)


class HopTablesRequestSchema(StrictSchema):
    site = fields.Nested(SiteSchema, required=True)
    answer = fields.Nested(AnsweredPlanSchema, required=True, metadata={
        "description": "The answer of POST /v1/plans or /v1/replans (other fields are ignored)"})


class HopTablesFormatSchema(StrictSchema):
    format = Text(load_default="json", validate=validate.OneOf(("json", "csv")),
                  metadata={"description": "json (default) or csv (text/csv, every system in one table)"})


class HopTableRowSchema(StrictSchema):
    position = fields.Integer(metadata={"description": "hop_order only: place in one period"})
    grid_index = fields.Integer()
    channel_number = fields.Integer(metadata={"description": "first_channel_number + grid_index * "
                                                             "channel_number_step"})
    centre_mhz = fields.String(metadata={"description": "first_centre_hz + grid_index * spacing_hz, MHz to 1 Hz"})


class SystemHopTablesSchema(StrictSchema):
    id = fields.String()
    label = fields.String()
    dwell_s = fields.Float(allow_none=True)
    period_s = fields.Float(allow_none=True)
    hop_set = fields.List(fields.Nested(HopTableRowSchema))
    hop_order = fields.List(fields.Nested(HopTableRowSchema), allow_none=True)


class HopTableNumberingSchema(StrictSchema):
    first_channel_number = fields.Integer()
    channel_number_step = fields.Integer()
    first_centre_hz = fields.Float()
    spacing_hz = fields.Float()


class HopTablesSchema(StrictSchema):
    format = fields.String(metadata={"description": "cohop-hop-tables/1"})
    site = fields.String()
    profile = fields.String()
    numbering = fields.Nested(HopTableNumberingSchema)
    systems = fields.List(fields.Nested(SystemHopTablesSchema))
    cautions = fields.List(fields.String())


def _document(site, answer: dict) -> dict:
    g = site.grid
    numbering = Numbering(g.first_centre_hz, g.spacing_hz, g.first_channel_number, g.channel_number_step)
    systems = [SystemInfo(s.id, s.label, s.dwell_s) for s in site.systems]
    for i, planned in enumerate(answer["plan"]):
        high = [c for c in planned["hop_set"] if c >= g.count]
        if high:
            raise SiteError([(f"/answer/plan/{i}/hop_set", f"channel {high[0]} is beyond the grid's {g.count}")])
    for i, order in enumerate((answer.get("sequences") or {}).get("systems", [])):
        if any(c >= g.count for c in order["channels"]):
            raise SiteError([(f"/answer/sequences/systems/{i}/channels", f"a channel is beyond the grid's "
                                                                        f"{g.count}")])
    try:
        return hop_table_document(site.name, site.profile, numbering, systems, answer)
    except ExportError as err:
        raise SiteError([("/answer" + err.pointer, str(err))]) from err


@blp.route("/hop-tables")
class HopTables(MethodView):
    @blp.arguments(HopTablesFormatSchema, location="query", as_kwargs=True)
    @blp.arguments(HopTablesRequestSchema)
    @blp.response(200, HopTablesSchema)
    @blp.body_errors()
    def post(self, body: dict, format: str = "json"):
        """Each planned system's hop set and hop order with your channel numbers and centre frequencies
        (`grid.first_channel_number`, `grid.channel_number_step`); `?format=csv` for the CSV form."""
        doc = _document(body["site"], body["answer"])
        if format == "csv":
            return Response(tables_csv(doc["systems"]), mimetype="text/csv")
        return doc
