"""Fields for response schemas that dump result objects as they are (`cohop.jobs.answers`).

A response field reads an attribute of the result object, often through a
path (`attribute="figures.wanted_dbm"`). These few fields cover what a plain
attribute cannot say; each is a subclass of the marshmallow field whose JSON
type it dumps, so the OpenAPI document states that type.

`Part` and `Length` name what they read with `of`, not `attribute`: several
fields of an answer may read one object (a system's `link` and `per_hop` both
read its figures), and marshmallow refuses two fields with one `attribute`
(a check that matters for loading; these schemas only dump).
"""

from __future__ import annotations

import math

from operator import attrgetter

from marshmallow import fields, missing, utils


class Part(fields.Nested):
    """A nested object of the answer (a group of figures under one key) read from `of`, an attribute path
    of the object being dumped, or from that object itself when `of` is None. With `null_when`, an attribute
    path of that value: the group is null when it is None."""

    def __init__(self, nested, *, of: str | None = None, null_when: str | None = None, **kwargs):
        self.of, self.null_when = of, null_when
        super().__init__(nested, **kwargs)

    def get_value(self, obj, attr, accessor=None, default=missing):
        value = obj if self.of is None else utils.get_value(obj, self.of)
        if self.null_when is not None and utils.get_value(value, self.null_when) is None:
            return None
        return value


class Length(fields.Integer):
    """The number of items of the sequence at `of`, an attribute path (a hop set's channel count)."""

    def __init__(self, *, of: str, **kwargs):
        self.of = of
        super().__init__(**kwargs)

    def get_value(self, obj, attr, accessor=None, default=missing):
        value = utils.get_value(obj, self.of)
        return None if value is None else len(value)

    def _serialize(self, value, attr, obj, **kwargs):
        return value


class FiniteOrNull(fields.Float):
    """A float whose infinite value dumps as null (JSON has no infinity; null then means "unbounded")."""

    def _serialize(self, value, attr, obj, **kwargs):
        if value is not None and math.isinf(value):
            return None
        return super()._serialize(value, attr, obj, **kwargs)


class DictOrAbsent(fields.Dict):
    """A mapping attribute that is left out of the answer when it is None."""

    def get_value(self, obj, attr, accessor=None, default=missing):
        value = super().get_value(obj, attr, accessor, default)
        return missing if value is None else value


class Bulk:
    """A schema mixin for objects an answer holds by the ten thousand (a source per ordered pair of systems):
    fields that read a plain attribute path of a result object are read with one `operator.attrgetter` each,
    built once per schema, instead of marshmallow's per-value path walk; fields with their own reading
    (`Part`, `Length`) go through marshmallow as usual. The JSON is the same (tests/api/test_bulk_dump.py);
    only for schemas whose objects are result objects, never dicts."""

    def _reading_plan(self) -> list:
        plan = []
        for name, field in self.dump_fields.items():
            key = field.data_key if field.data_key is not None else name
            plain = type(field).get_value is fields.Field.get_value and field._CHECK_ATTRIBUTE
            plan.append((key, name, field, attrgetter(field.attribute or name) if plain else None))
        self._plan = plan
        return plan

    def _serialize(self, obj, *, many: bool = False):
        if many and obj is not None:
            return [self._serialize(item) for item in obj]
        plan = self.__dict__.get("_plan") or self._reading_plan()
        out = self.dict_class()
        for key, name, field, read in plan:
            if read is not None:
                out[key] = field._serialize(read(obj), name, obj)
                continue
            value = field.serialize(name, obj, accessor=self.get_attribute)
            if value is not missing:
                out[key] = value
        return out
