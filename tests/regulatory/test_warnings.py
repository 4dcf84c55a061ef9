"""A warning always says why (issue 11 item 4), in its finding and in the command line's assessment table.

Every way a profile check can end in a warning is produced below; each message must carry its reason, and
a warning whose message matches none of the known reasons fails the catalogue test (so a new warning
without a reason cannot slip in).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from cohop.regulatory import PROFILES, check_compliance
from cohop.site import System
from tests.cli_helpers import run_cli
from tests.regulatory.findings import centres, run

KHZ, MHZ = 1e3, 1e6
REASONS = {
    # 47 CFR 15.247(a)(1) [pub]: order and equal use need the sequence.
    "sequence": "cannot be seen from a hop set, and no sequence was given",
    # 15.247(a)(1)(i)-(iii) [pub], EN 300 328 [partly seen]: the average meets the limit, a worst window does not.
    "occupancy": "a warning because the rule may be read per window rather than on average",
    # EN 300 220-2 4.3.10: deliberately not encoded.
    "fhss": "deliberately not encoded",
    # 47 CFR 15.247(c)(1)(iii) [from memory]: exclusive fixed point-to-point use is the operator's declaration.
    "point-to-point": "is the operator's declaration and cannot be checked here",
}


def make_system(**kw) -> System:
    base = dict(id="s1", tx_power_dbm=10.0, antenna_gain_dbi=0.0, bandwidth_hz=150 * KHZ, dwell_s=0.3,
                packet_airtime_s=0.3, activity_fraction=1.0, required_sir_db=10.0, rejection=(), retry_limit=0)
    base.update(kw)
    return System(**base)


def _warnings() -> list:
    """Warnings from every profile on sets that provoke each kind (no sequence, a worst-case window, the
    EN 300 220-2 note, a fixed point-to-point declaration)."""
    out = []
    grids = {"902-928": (902.5 * MHZ, 200 * KHZ, 50, 150 * KHZ), "2400-2483.5": (2402 * MHZ, 1 * MHZ, 15, 1 * MHZ),
             "5725-5850": (5726 * MHZ, 1.5 * MHZ, 75, 1 * MHZ), "863-870": (869.4125 * MHZ, 25 * KHZ, 10, 25 * KHZ)}
    for pid, p in PROFILES.items():
        if p.band is None:
            continue
        first, spacing, n, bw = next(g for key, g in grids.items() if key in pid)
        for ptp in (False, True):
            s = make_system(bandwidth_hz=bw, antenna_gain_dbi=9.0, fixed_point_to_point=ptp,
                            activity_fraction=0.01 if "868" in pid or "eu" in pid else 1.0,
                            **({"dwell_s": 0.01, "packet_airtime_s": 0.01} if "en300328-2400-2483.5-non" in pid else {}))
            c = centres(first, spacing, n)
            out += [f for f in check_compliance(p, s, np.arange(n), c, p.band) if f.status == "warning"]
    return out


def test_every_warning_carries_a_known_reason():
    warnings = _warnings()
    kinds = {f.rule.kind for f in warnings}
    assert kinds == set(REASONS), kinds  # each kind of warning was produced
    for f in warnings:
        assert REASONS[f.rule.kind] in f.message, (f.rule.id, f.message)


# 47 CFR 15.247(a)(1)(i) [pub]: 0.4 s within 20 s; a 15 s period averages 0.4 s, a placed window sees 0.6 s.
def test_occupancy_warning_gives_the_window_and_its_figure():
    f = run("fcc15.247-902-928", make_system(), centres(902.5 * MHZ, 200 * KHZ, 50))["occupancy"]
    assert f.status == "warning"
    assert "a 20.000 s window placed to catch 2 visits sees 600.0 ms, over it" in f.message


def test_assessment_table_prints_warnings_with_their_reasons(capsys):
    # The default sample (fcc15.247-902-928) carries no sequences: every system gets the sequence warning.
    code, out, _ = run_cli(capsys, "assess")
    assert code == 0
    lines = [ln for ln in out.splitlines() if " warning fcc15.247-902-928.sequence: " in ln]
    assert len(lines) == 5, out
    assert all(REASONS["sequence"] in ln and "[47 CFR 15.247(a)(1)" in ln for ln in lines)
    assert "compliance failures and warnings" in out


@pytest.mark.parametrize("sample", ["open_pit_mine", "water_works"])
def test_assessment_table_lists_every_flagged_finding(capsys, sample):
    # Every warning and failure of the JSON answer appears in the table with its message.
    code, out, _ = run_cli(capsys, "assess", "--sample", sample)
    assert code == 0
    code, raw, _ = run_cli(capsys, "assess", "--sample", sample, "--json")
    flagged = [(s["id"], f) for s in json.loads(raw)["systems"] for f in s["compliance"]["findings"]
               if f["status"] in ("warning", "fail")]
    assert flagged  # both samples carry findings to show
    for sid, f in flagged:
        assert f"  {sid}: {f['status']} {f['rule']}: {f['message']}" in out
