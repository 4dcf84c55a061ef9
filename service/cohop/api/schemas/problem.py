"""RFC 9457 problem details: the one error body the service sends."""

from __future__ import annotations

from marshmallow import fields

from cohop import limits
from cohop.api.schemas.site import StrictSchema


class FieldErrorSchema(StrictSchema):
    pointer = fields.String(metadata={"description": "JSON pointer (RFC 6901) into the request body"})
    detail = fields.String()


class ProblemSchema(StrictSchema):
    type = fields.String(metadata={"description": "URI reference naming the problem type"})
    title = fields.String()
    status = fields.Integer()
    detail = fields.String()
    instance = fields.String()
    errors = fields.List(fields.Nested(FieldErrorSchema), metadata={
        "description": f"The offending fields, when the request was invalid: every one, up to "
                       f"{limits.MAX_FIELD_ERRORS} (sorted by pointer); pointers and details longer than 500 "
                       "characters are cut"})
    errors_omitted = fields.Integer(metadata={
        "description": f"How many further field errors were left out of `errors` (present only when more than "
                       f"{limits.MAX_FIELD_ERRORS} were found)"})
