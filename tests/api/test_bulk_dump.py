"""The bulk dump of sources, channels and overlaps gives the same JSON as marshmallow's own per-field reading
(the reference: marshmallow's `Schema._serialize`)."""

from __future__ import annotations

import marshmallow as ma
import pytest

from cohop.api.app import create_app
from cohop.api.schemas import dump

from .conftest import SAMPLE_FILES, load_sample


@pytest.mark.parametrize("name", SAMPLE_FILES)
def test_the_bulk_dump_equals_marshmallow_field_by_field(name, monkeypatch):
    client = create_app({"TESTING": True}).test_client()
    body = {**load_sample(name), "detail": "source"}
    bulk = client.post("/v1/assessments", json=body)
    monkeypatch.setattr(dump.Bulk, "_serialize", lambda self, obj, *, many=False: ma.Schema._serialize(
        self, obj, many=many))
    plain = client.post("/v1/assessments", json=body)
    assert bulk.status_code == plain.status_code == 200
    assert bulk.get_data() == plain.get_data()
    answer = bulk.get_json()
    assert sum(len(s["sources"]) for s in answer["systems"]) > 0
    assert all(ch.get("by_source") is not None for s in answer["systems"] for ch in s["channels"])
