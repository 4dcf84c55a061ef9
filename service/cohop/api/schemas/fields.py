"""Strict fields: numbers must be JSON numbers (not strings or booleans) and finite, within the bounds of
`cohop.limits`; lists have their length checked before any element is looked at."""

from __future__ import annotations

import dataclasses
import math

import marshmallow as ma
from marshmallow import fields, validate

from cohop import limits


def within(bound: limits.Bound) -> validate.Range:
    """The inclusive range of a `cohop.limits.Bound` (written into the OpenAPI document as minimum/maximum)."""
    return validate.Range(min=bound.minimum, max=bound.maximum)


def _described(kwargs: dict, bound: limits.Bound | None) -> dict:
    if bound is not None:
        kwargs["validate"] = [within(bound), *_as_list(kwargs.get("validate"))]
    return kwargs


def _as_list(checks) -> list:
    if checks is None:
        return []
    return list(checks) if isinstance(checks, (list, tuple)) else [checks]


class Number(fields.Float):
    """A finite JSON number. Rejects strings, booleans, NaN and infinity. `bound` gives its range."""

    json_types = (int, float)

    def __init__(self, bound: limits.Bound | None = None, **kwargs):
        self.plain_bound = bound if bound is not None and kwargs.get("validate") is None else None
        super().__init__(allow_nan=False, **_described(kwargs, bound))

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise ma.ValidationError("Must be a JSON number.")
        if isinstance(value, float) and not math.isfinite(value):
            raise ma.ValidationError("Must be finite (no NaN or infinity).")
        if isinstance(value, int) and abs(value) > 1e300:
            raise ma.ValidationError("Must be a number of ordinary size.")
        return super()._deserialize(value, attr, data, **kwargs)


class Count(fields.Integer):
    """A JSON integer (not a float, string or boolean). `bound` gives its range."""

    json_types = (int,)

    def __init__(self, bound: limits.Bound | None = None, **kwargs):
        self.plain_bound = bound if bound is not None and kwargs.get("validate") is None else None
        super().__init__(strict=True, **_described(kwargs, bound))

    def _deserialize(self, value, attr, data, **kwargs):
        if isinstance(value, bool) or not isinstance(value, int):
            raise ma.ValidationError("Must be a JSON integer.")
        return super()._deserialize(value, attr, data, **kwargs)


class Flag(fields.Boolean):
    """A JSON boolean: true or false only (not 1, 0 or strings)."""

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, bool):
            raise ma.ValidationError("Must be a JSON boolean (true or false).")
        return value


class Text(fields.String):
    """A JSON string (numbers are not turned into strings)."""

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, str):
            raise ma.ValidationError("Must be a JSON string.")
        return super()._deserialize(value, attr, data, **kwargs)


class List(fields.List):
    """A JSON array whose length is checked before its elements are, and whose element errors stop at
    `cohop.limits.MAX_FIELD_ERRORS` (a huge array of bad elements costs one error, not millions).

    Arrays of plain bounded numbers (a survey trace, a hop set) are checked in one pass when every element
    is valid; only an array with a bad element goes element by element, for the messages."""

    def __init__(self, inner, *, max_length: int, min_length: int | None = None, **kwargs):
        self.length = validate.Length(min=min_length, max=max_length)
        kwargs["validate"] = [self.length, *_as_list(kwargs.get("validate"))]
        super().__init__(inner, **kwargs)

    def _deserialize(self, value, attr, data, **kwargs):
        if not isinstance(value, list):
            raise self.make_error("invalid")
        self.length(value)
        fast = _plain_numbers(self.inner, value)
        if fast is not None:
            return fast
        result, errors = [], {}
        for idx, each in enumerate(value):
            try:
                result.append(self.inner.deserialize(each, **kwargs))
            except ma.ValidationError as error:
                errors[idx] = error.messages
                if len(errors) >= limits.MAX_FIELD_ERRORS and idx + 1 < len(value):
                    errors["_schema"] = [f"Validation stopped after {len(errors)} failing elements "
                                         f"(of {len(value)})."]
                    break
        if errors:
            raise ma.ValidationError(errors)
        return result


def _plain_numbers(inner, value: list) -> list | None:
    """The values of an array of valid bounded numbers, or None if `inner` has other checks or any
    element fails (booleans, strings, NaN and out-of-range values all fail the test below)."""
    bound = getattr(inner, "plain_bound", None)
    if bound is None or inner.allow_none:
        return None
    types, lo, hi = inner.json_types, bound.minimum, bound.maximum
    if not all(type(x) in types and lo <= x <= hi for x in value):
        return None
    return [float(x) for x in value] if isinstance(inner, Number) else list(value)


IDENTIFIER = validate.Regexp(r"^[A-Za-z0-9][A-Za-z0-9_.:-]{0,63}$",
                             error="Use 1-64 letters, digits or _ . : - (starting with a letter or digit).")


def default(cls, name: str):
    """The default of field `name` of dataclass `cls`: a request schema's load_default is defined there, once."""
    f = next(f for f in dataclasses.fields(cls) if f.name == name)
    if f.default is dataclasses.MISSING:
        raise ValueError(f"{cls.__name__}.{name} has no plain default")
    return f.default
