"""cohop.limits is where every bound lives, and the OpenAPI document and README state the same bounds."""

from __future__ import annotations

from pathlib import Path

import marshmallow as ma
import pytest
from marshmallow import fields

from cohop import limits
from cohop.api.app import create_app
from cohop.api.schemas import fields as strict
from cohop.api.schemas.assessment import AssessmentRequestSchema
from cohop.api.schemas.plan import PlanRequestSchema
from cohop.api.schemas.replan import ReplanRequestSchema

README = Path(__file__).resolve().parents[2] / "README.md"
REQUESTS = (AssessmentRequestSchema, PlanRequestSchema, ReplanRequestSchema)


def _fields(schema: ma.Schema, path=""):
    """(path, field) of every field reachable from a request schema, nested schemas and list items included."""
    for name, f in schema.fields.items():
        yield from _walk(f, f"{path}/{name}")


def _walk(f, path):
    yield path, f
    if isinstance(f, fields.Nested):
        yield from _fields(f.schema, path)
    elif isinstance(f, fields.List):
        yield from _walk(f.inner, path + "/*")


ALL_FIELDS = sorted({(p, f) for s in REQUESTS for p, f in _fields(s())}, key=lambda pf: pf[0])


def test_every_number_has_a_bound_from_limits():
    numbers = [(p, f) for p, f in ALL_FIELDS if isinstance(f, (fields.Float, fields.Integer))]
    assert len(numbers) > 60
    unbounded = [p for p, f in numbers if not any(isinstance(v, ma.validate.Range) and v.min is not None
                                                  and v.max is not None for v in f.validators)]
    assert not unbounded
    assert all(isinstance(f, (strict.Number, strict.Count)) for _, f in numbers)


def test_every_list_is_capped_before_its_elements_are_read():
    lists = [(p, f) for p, f in ALL_FIELDS if isinstance(f, fields.List)]
    assert len(lists) > 15
    assert [p for p, f in lists if not isinstance(f, strict.List) or f.length.max is None] == []


def test_every_text_is_short_or_enumerated():
    texts = [(p, f) for p, f in ALL_FIELDS if isinstance(f, fields.String)]
    open_ended = [p for p, f in texts if not any(isinstance(v, (ma.validate.Length, ma.validate.OneOf,
                                                                  ma.validate.Regexp)) for v in f.validators)]
    assert not open_ended


def _request_schemas(spec):
    """Every component schema reachable from a request body of the OpenAPI document."""
    seen, todo = {}, []
    for item in spec["paths"].values():
        for op in item.values():
            if isinstance(op, dict) and "requestBody" in op:
                todo += [c["schema"] for c in op["requestBody"]["content"].values()]
    while todo:
        node = todo.pop()
        if "$ref" in node:
            name = node["$ref"].rsplit("/", 1)[-1]
            if name not in seen:
                seen[name] = spec["components"]["schemas"][name]
                todo.append(seen[name])
            continue
        todo += list(node.get("properties", {}).values())
        if "items" in node:
            todo.append(node["items"])
        for key in ("allOf", "oneOf", "anyOf"):
            todo += node.get(key, [])
    return seen


def _leaves(node):
    yield node
    for sub in node.get("properties", {}).values():
        yield from _leaves(sub)
    if "items" in node:
        yield from _leaves(node["items"])


def test_openapi_states_every_bound():
    spec = create_app({"TESTING": True}).test_client().get("/openapi.json").get_json()
    schemas = _request_schemas(spec)
    assert {"Site", "System", "Survey", "Interferer", "PlanRequest", "ReplanRequest"} <= set(schemas)
    leaves = [leaf for s in schemas.values() for leaf in _leaves(s) if "$ref" not in leaf]
    numbers = [leaf for leaf in leaves if leaf.get("type") in ("number", "integer")]
    arrays = [leaf for leaf in leaves if leaf.get("type") == "array"]
    assert numbers and all("minimum" in n and "maximum" in n for n in numbers), numbers
    assert arrays and all("maxItems" in a for a in arrays), arrays
    dwell = schemas["System"]["properties"]["dwell_s"]
    assert (dwell["minimum"], dwell["maximum"]) == (limits.DWELL_S.minimum, limits.DWELL_S.maximum)
    assert schemas["Site"]["properties"]["systems"]["maxItems"] == limits.MAX_SYSTEMS
    problem = spec["components"]["schemas"]["Problem"]["properties"]
    assert problem["errors_omitted"]["type"] == "integer"


def test_readme_states_the_limits_table_verbatim():
    assert limits.markdown_table() in README.read_text()


@pytest.mark.parametrize("bound", [b for b, _ in limits.FIELDS], ids=[f for _, f in limits.FIELDS])
def test_every_bound_is_ordered_and_explained(bound):
    assert bound.minimum < bound.maximum and bound.reason
