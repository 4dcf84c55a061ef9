"""The site-to-radios flow through the command line alone, on an invented steel mill (steel_mill_site.json):
describe, plan, export hop tables, write the plan back, log an interferer, re-plan, diff, compare."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest

from cohop import cli
from tests.cli_helpers import run_cli

SITE = Path(__file__).with_name("steel_mill_site.json")
NEW_WIFI = {"id": "pulpit-wifi", "label": "New furnace pulpit Wi-Fi, channel 6", "centre_hz": 2437e6,
            "width_hz": 20e6, "activity_fraction": 0.5, "eirp_dbm": 20.0, "position": {"x_m": 50, "y_m": 40}}


@pytest.fixture(scope="module")
def flow(tmp_path_factory):
    """Run the flow once; each test reads one step's files."""
    d = tmp_path_factory.mktemp("steel_mill")
    steps = {}

    def step(name, *argv):
        import contextlib
        import io

        out, err = io.StringIO(), io.StringIO()
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            steps[name] = (cli.main(list(argv)), out.getvalue(), err.getvalue())
        assert steps[name][0] == cli.EXIT_OK, (name, steps[name])

    step("plan", "plan", str(SITE), "--time-limit", "2", "--seed", "1", "--save", str(d / "plan.json"),
         "--export", str(d / "tables"))
    step("apply", "apply", str(SITE), str(d / "plan.json"), "-o", str(d / "applied.json"))
    changed = json.loads((d / "applied.json").read_text())
    changed["interferers"].append(NEW_WIFI)  # the logged interferer
    (d / "changed.json").write_text(json.dumps(changed))
    step("replan", "replan", str(d / "changed.json"), "--current", str(d / "applied.json"), "--time-limit", "2",
         "--seed", "1", "--save", str(d / "replan.json"), "--export", str(d / "tables2"), "--export-per", "site")
    step("diff", "diff", str(d / "plan.json"), str(d / "replan.json"), "--json")
    step("compare", "compare", str(d / "applied.json"), str(d / "changed.json"))
    return d, steps


def test_hop_tables_match_the_plan(flow):
    d, _ = flow
    plan = json.loads((d / "plan.json").read_text())
    site = json.loads(SITE.read_text())
    grid = site["grid"]
    for p in plan["plan"]:
        rows = list(csv.DictReader((d / "tables" / f"{p['id']}.csv").open(encoding="utf-8")))
        hop_set = [r for r in rows if r["table"] == "hop_set"]
        assert [int(r["grid_index"]) for r in hop_set] == sorted(p["hop_set"])
        # the user's numbering (first_channel_number 2) and the grid's centres, recomputed here
        assert all(int(r["channel_number"]) == 2 + int(r["grid_index"]) for r in rows)
        assert all(abs(float(r["centre_mhz"]) * 1e6 - (grid["first_centre_hz"] + int(r["grid_index"])
                                                     * grid["spacing_hz"])) < 0.5 for r in rows)
        order = [int(r["grid_index"]) for r in rows if r["table"] == "hop_order"]
        seq = next(s for s in plan["sequences"]["systems"] if s["id"] == p["id"])
        assert order == seq["channels"]


def test_apply_writes_the_plan_into_the_site(flow):
    d, _ = flow
    plan = json.loads((d / "plan.json").read_text())
    applied = {s["id"]: s for s in json.loads((d / "applied.json").read_text())["systems"]}
    for p in plan["plan"]:
        assert applied[p["id"]]["hop_set"] == sorted(p["hop_set"])
    for s in plan["sequences"]["systems"]:
        assert applied[s["id"]]["sequence"] == s["channels"]


def test_the_written_back_site_assesses_as_the_plan(flow, capsys):
    d, _ = flow
    plan = json.loads((d / "plan.json").read_text())
    code, out, _ = run_cli(capsys, "assess", str(d / "applied.json"), "--json")
    assert code == 0
    figures = {s["id"]: s["per_hop"]["collision_probability"] for s in json.loads(out)["systems"]}
    for s in plan["assessment"]["systems"]:
        assert figures[s["id"]] == pytest.approx(s["per_hop"]["collision_probability"], abs=1e-12)


def test_replan_diff_and_compare_show_the_change(flow):
    d, steps = flow
    replan = json.loads((d / "replan.json").read_text())
    diff = json.loads(steps["diff"][1])
    assert (diff["from"], diff["to"]) == ("plan", "re-plan")
    by_id = {s["id"]: s for s in diff["systems"]}
    for change in replan["diff"]:  # the service's own per-system changes agree with ours
        assert by_id[change["id"]]["dropped"] == sorted(change["dropped"])
        assert by_id[change["id"]]["added"] == sorted(change["added"])
    assert any(s["dropped"] for s in diff["systems"])  # the new Wi-Fi channel (2427-2447 MHz) forced changes
    assert (d / "tables2" / "hop_tables.csv").exists()
    compare = steps["compare"][1]
    assert "applied.json" in compare and "changed.json" in compare
    assert all(sid in compare for sid in by_id)
