"""Hop tables (cohop.exports): numbering, frequencies to 1 Hz, CSV and JSON agree, file layout."""

from __future__ import annotations

import csv
import io
import json

import pytest

from cohop.exports import FORMAT, ExportError, hop_tables, tables_csv, write_hop_tables

# A sub-GHz grid with a 12.5 kHz raster (a spacing that is not a whole number of MHz or kHz, common practice
# for narrowband channel plans), numbered from 100 in steps of 2, as a user's radio might number them.
SITE = {"name": "test", "profile": "custom",
        "grid": {"first_centre_hz": 868_006_250.0, "spacing_hz": 12_500.0, "count": 40, "first_channel_number": 100,
                 "channel_number_step": 2},
        "systems": [{"id": "a", "label": "A", "dwell_s": 0.1}, {"id": "b/2", "label": "B", "dwell_s": 0.2}]}
ANSWER = {"plan": [{"id": "a", "hop_set": [7, 1, 3]}, {"id": "b/2", "hop_set": [0, 39]}],
          "sequences": {"systems": [{"id": "a", "channels": [3, 1, 7], "period_s": 0.3}]},
          "cautions": ["planning estimate"]}


def test_numbers_and_frequencies_follow_the_grid():
    doc = hop_tables(SITE, ANSWER)
    assert doc["format"] == FORMAT and doc["cautions"] == ["planning estimate"]
    a = doc["systems"][0]
    assert [r["grid_index"] for r in a["hop_set"]] == [1, 3, 7]  # the hop set sorted
    assert [r["channel_number"] for r in a["hop_set"]] == [102, 106, 114]  # 100 + 2 k
    # centre = first_centre_hz + k * spacing_hz (the grid's definition, README "Site"), in MHz to 1 Hz
    assert [r["centre_mhz"] for r in a["hop_set"]] == ["868.018750", "868.043750", "868.093750"]
    assert [(r["position"], r["grid_index"]) for r in a["hop_order"]] == [(0, 3), (1, 1), (2, 7)]
    b = doc["systems"][1]
    assert b["hop_order"] is None  # no sequence in the answer: no order is invented
    assert b["hop_set"][-1] == {"grid_index": 39, "channel_number": 178, "centre_mhz": "868.493750"}


def test_default_numbering_is_the_grid_index():
    site = {**SITE, "grid": {"first_centre_hz": 2_402e6, "spacing_hz": 1e6, "count": 79}}
    rows = hop_tables(site, ANSWER)["systems"][0]["hop_set"]
    assert [r["channel_number"] for r in rows] == [r["grid_index"] for r in rows]
    assert rows[0]["centre_mhz"] == "2403.000000"


def test_csv_holds_what_the_json_holds():
    doc = hop_tables(SITE, ANSWER)
    rows = list(csv.DictReader(io.StringIO(tables_csv(doc["systems"]))))
    for s in doc["systems"]:
        mine = [r for r in rows if r["system"] == s["id"]]
        assert [(int(r["grid_index"]), int(r["channel_number"]), r["centre_mhz"]) for r in mine
                if r["table"] == "hop_set"] == [(r["grid_index"], r["channel_number"], r["centre_mhz"])
                                                for r in s["hop_set"]]
        assert [int(r["position"]) for r in mine if r["table"] == "hop_order"] == \
            [r["position"] for r in s["hop_order"] or []]


def test_files_per_system_and_per_site(tmp_path):
    per_system = write_hop_tables(str(tmp_path / "sys"), SITE, ANSWER)
    assert sorted(p.name for p in per_system) == ["CAUTIONS.txt", "a.csv", "a.json", "b_2.csv", "b_2.json"]
    assert [s["id"] for s in json.loads((tmp_path / "sys" / "b_2.json").read_text())["systems"]] == ["b/2"]
    per_site = write_hop_tables(str(tmp_path / "site"), SITE, ANSWER, per="site")
    assert sorted(p.name for p in per_site) == ["CAUTIONS.txt", "hop_tables.csv", "hop_tables.json"]
    whole = json.loads((tmp_path / "site" / "hop_tables.json").read_text())
    assert [s["id"] for s in whole["systems"]] == ["a", "b/2"]
    assert "planning estimate" in (tmp_path / "site" / "CAUTIONS.txt").read_text()


def test_answers_without_a_plan_or_with_unknown_systems_are_refused():
    with pytest.raises(ExportError, match="no plan"):
        hop_tables(SITE, {"systems": []})
    with pytest.raises(ExportError, match="'zz'"):
        hop_tables(SITE, {"plan": [{"id": "zz", "hop_set": [1]}]})
