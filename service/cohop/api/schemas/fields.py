"""Strict fields: numbers must be JSON numbers (not strings or booleans) and finite."""

from __future__ import annotations

import math

import marshmallow as ma
from marshmallow import fields, validate


class Number(fields.Float):
    """A finite JSON number. Rejects strings, booleans, NaN and infinity.

    An exclusive lower bound is written into the OpenAPI document too (apispec leaves it out)."""

    def __init__(self, **kwargs):
        checks = kwargs.get("validate")
        checks = checks if isinstance(checks, (list, tuple)) else [checks]
        if any(isinstance(c, validate.Range) and c.min is not None and not c.min_inclusive for c in checks):
            kwargs["metadata"] = {**kwargs.get("metadata", {}), "exclusiveMinimum": True}
        super().__init__(allow_nan=False, **kwargs)

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise ma.ValidationError("Must be a JSON number.")
        if isinstance(value, float) and not math.isfinite(value):
            raise ma.ValidationError("Must be finite (no NaN or infinity).")
        return super()._deserialize(value, attr, data, **kwargs)


class Count(fields.Integer):
    """A JSON integer (not a float, string or boolean)."""

    def __init__(self, **kwargs):
        super().__init__(strict=True, **kwargs)

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, bool) or not isinstance(value, int):
            raise ma.ValidationError("Must be a JSON integer.")
        return super()._deserialize(value, attr, data, **kwargs)


class Text(fields.String):
    """A JSON string (numbers are not turned into strings)."""

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, str):
            raise ma.ValidationError("Must be a JSON string.")
        return super()._deserialize(value, attr, data, **kwargs)


IDENTIFIER = validate.Regexp(r"^[A-Za-z0-9][A-Za-z0-9_.:-]{0,63}$",
                             error="Use 1-64 letters, digits or _ . : - (starting with a letter or digit).")


def positive(maximum: float | None = None):
    return validate.Range(min=0.0, min_inclusive=False, max=maximum)


def between(lo: float, hi: float):
    return validate.Range(min=lo, max=hi)
