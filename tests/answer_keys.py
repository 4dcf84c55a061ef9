"""Every field a response schema declares is in the answer.

The response schemas dump result objects by attribute paths (`attribute="figures.wanted_dbm"`); a path that
names nothing would leave its key out of the answer silently, and the OpenAPI document, which lists no
required properties in answers, would not notice. This walks the schema and the answer together.
"""

from __future__ import annotations

from marshmallow import fields

#: Keys an answer leaves out by design: a channel's breakdown by source exists at detail "source" only.
OPTIONAL = {"by_source"}


def missing_keys(schema, data, path: str = "") -> list[str]:
    """JSON pointers of the declared fields absent from `data` (recursing into nested objects and lists)."""
    out = []
    for name, field in schema.dump_fields.items():
        key = field.data_key or name
        if key not in data:
            if key not in OPTIONAL:
                out.append(f"{path}/{key}")
            continue
        out += _missing_in(field, data[key], f"{path}/{key}")
    return out


def _missing_in(field, value, path: str) -> list[str]:
    if value is None:
        return []
    if isinstance(field, fields.Nested):
        return missing_keys(field.schema, value, path)
    if isinstance(field, fields.List):
        return [m for i, each in enumerate(value) for m in _missing_in(field.inner, each, f"{path}/{i}")]
    return []
