"""The text tables: --detail honoured, a re-plan request assessed on its current plan, wording per command."""

from __future__ import annotations

import json

import pytest

from cohop import cli_text, samples
from cohop_client import Plan
from tests.cli_helpers import run_cli


@pytest.fixture(scope="module")
def assessed():
    """The default sample assessed at each detail (one run per detail), as the CLI's JSON."""
    from cohop import cli

    out = {}
    for detail in ("system", "source", "channel"):
        import contextlib
        import io

        buf = io.StringIO()
        with contextlib.redirect_stdout(buf), contextlib.redirect_stderr(io.StringIO()):
            assert cli.main(["assess", "--json", "--detail", detail]) == 0
        out[detail] = json.loads(buf.getvalue())
    return out


def _table(raw: dict, detail: str) -> str:
    from cohop_client import Assessment

    return cli_text.assessment_table(Assessment.from_json(raw), detail=detail)


def test_detail_changes_the_table(assessed):
    plain = _table(assessed["system"], "system")
    sources = _table(assessed["source"], "source")
    channels = _table(assessed["channel"], "channel")
    assert "by source" not in plain and "per channel" not in plain
    assert "by source" in channels and "dominant source" in channels and "its sources" not in channels
    assert "its sources" in sources
    first = assessed["channel"]["systems"][0]
    assert f"{first['id']}: per channel" in channels
    # every channel of the hop set gets its row, with its centre in MHz
    rows = [line for line in channels.splitlines() if line.startswith("  ") and "MHz" not in line]
    for c in first["channels"][:3]:
        assert any(line.split()[:2] == [str(c["channel"]), f"{c['centre_hz'] / 1e6:.6f}"] for line in rows)
    src = max(first["sources"], key=lambda s: s["collision_probability"])
    assert any(line.split()[:1] == [src["id"]] and cli_text._pct(src["collision_probability"]) in line
               for line in channels.splitlines())
    broken_down = assessed["source"]["systems"][0]["channels"][0]
    if broken_down["by_source"]:
        sid, share = max(broken_down["by_source"].items(), key=lambda kv: kv[1])
        assert f"{sid} {cli_text._pct(share)}" in sources


def test_assess_of_a_replan_request_uses_its_current_plan(capsys):
    code, out, err = run_cli(capsys, "assess", "--sample", "water_works_replan", "--json")
    assert code == 0
    current = {s["system"]: sorted(s["hop_set"]) for s in samples.load("water_works_replan")["current"]["systems"]}
    assessed = {s["id"]: sorted(s["hop_set"]) for s in json.loads(out)["systems"]}
    assert assessed == current
    assert "current plan" in err


def test_plan_table_wording(capsys):
    code, out, err = run_cli(capsys, "plan", "--time-limit", "1")
    assert code == 0
    assert "to assess your own" not in err and "to plan your own" in err
    code, out, _ = run_cli(capsys, "plan", "--time-limit", "1", "--json")
    raw = json.loads(out)
    raw["solver"]["notes"] = []
    assert "notes:" not in cli_text.plan_table(Plan.from_json(raw))
    raw["solver"]["notes"] = ["a note"]
    assert "notes:\n  - a note" in cli_text.plan_table(Plan.from_json(raw))
