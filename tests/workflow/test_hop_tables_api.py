"""POST /v1/hop-tables: the same document as the command line's files, CSV on request, pointers on errors."""

from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest

from cohop.api import create_app
from cohop.exports import hop_tables, tables_csv

SITE = json.loads(Path(__file__).with_name("steel_mill_site.json").read_text())
# A hand-made answer in the plan answer's shape (plan, sequences, cautions; the rest is ignored)
ANSWER = {"plan": [{"id": "ladle-crane", "hop_set": [30, 10, 20], "centres_hz": []},
                   {"id": "slag-carrier", "hop_set": [0, 78]}],
          "sequences": {"systems": [{"id": "ladle-crane", "channels": [20, 10, 30], "period_s": 0.03}],
                        "notes": []},
          "cautions": ["planning estimate"], "solver": {"status": "optimal"}}


@pytest.fixture(scope="module")
def client():
    return create_app({"TESTING": True}).test_client()


def test_json_equals_the_command_lines_document(client):
    resp = client.post("/v1/hop-tables", json={"site": SITE, "answer": ANSWER})
    assert resp.status_code == 200
    doc = resp.get_json()
    assert doc == json.loads(json.dumps(hop_tables(SITE, ANSWER)))
    ladle = doc["systems"][0]
    # grid 2402 MHz + k x 1 MHz, numbered from 2 (steel_mill_site.json)
    assert ladle["hop_order"][0] == {"position": 0, "grid_index": 20, "channel_number": 22, "centre_mhz": "2422.000000"}


def test_csv_on_request(client):
    resp = client.post("/v1/hop-tables?format=csv", json={"site": SITE, "answer": ANSWER})
    assert resp.status_code == 200 and resp.mimetype == "text/csv"
    assert resp.get_data(as_text=True) == tables_csv(hop_tables(SITE, ANSWER)["systems"])


@pytest.mark.parametrize("change, pointer", [
    (lambda a: a["plan"][1].update(id="nope"), "/answer/plan/1/id"),
    (lambda a: a["plan"][0].update(hop_set=[79]), "/answer/plan/0/hop_set"),
    (lambda a: a["sequences"]["systems"][0].update(channels=[500]), "/answer/sequences/systems/0/channels"),
    (lambda a: a.update(plan="all of them"), "/answer/plan"),
])
def test_errors_point_into_the_answer(client, change, pointer):
    answer = copy.deepcopy(ANSWER)
    change(answer)
    resp = client.post("/v1/hop-tables", json={"site": SITE, "answer": answer})
    assert resp.status_code == 422
    assert pointer in [e["pointer"] for e in resp.get_json()["errors"]]


def test_unknown_format_is_refused(client):
    resp = client.post("/v1/hop-tables?format=xml", json={"site": SITE, "answer": ANSWER})
    assert resp.status_code == 422
    assert resp.get_json()["errors"][0]["pointer"] == "/query/format"


def test_client_method_gives_the_same_document():
    from cohop.embedded import EMBEDDED_URL, embedded_session
    from cohop_client import Client

    with Client(EMBEDDED_URL, session=embedded_session(create_app({"TESTING": True}))) as api:
        assert api.hop_tables(SITE, ANSWER) == json.loads(json.dumps(hop_tables(SITE, ANSWER)))
