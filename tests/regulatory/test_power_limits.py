"""Every power limit, from its value in watts, at the boundary: just below, at and just above.

Reference: the rule texts of 47 CFR 15.247(b) and ETSI EN 300 328 / EN 300 220 as recorded in cohop.regulatory.profiles, with their certainty marks; the
level of a limit is 10 log10(P / 1 mW) (definition of dBm), computed here from the watts the rule states,
independently of `cohop.regulatory.power`. "Just" is one part in a million of the watts (4.3e-6 dB): far
above floating-point noise, far below any rounding a user could type.
"""

from __future__ import annotations

import math

import pytest

from cohop.site import System
from tests.regulatory.findings import centres, run

KHZ, MHZ = 1e3, 1e6
DIPOLE_DBI = 2.15  # e.r.p. = e.i.r.p. - 2.15 dB (ERC Rec 70-03) [partly seen]
G915, G2400, G5800 = (902.5 * MHZ, 300 * KHZ), (2402 * MHZ, 1 * MHZ), (5726 * MHZ, 1.5 * MHZ)


def dbm(watts: float) -> float:
    return 10 * math.log10(watts / 1e-3)


def make_system(**kw) -> System:
    base = dict(id="s1", tx_power_dbm=0.0, antenna_gain_dbi=0.0, bandwidth_hz=300 * KHZ, dwell_s=0.1,
                packet_airtime_s=0.1, activity_fraction=0.001, required_sir_db=10.0, rejection=(), retry_limit=0)
    base.update(kw)
    return System(**base)


# (case, profile, finding, (first centre, spacing), channels, system, stated watts, dB off for antenna gain,
#  what the limit bounds). Rule text and certainty beside each.
CASES = [
    # 47 CFR 15.247(b)(2) [mem, seen quoted]: 902-928 MHz, 1 W with at least 50 hopping channels, 0.25 W with 25-49.
    ("fcc15.247-902-928 1 W", "fcc15.247-902-928", "power", G915, 50, {}, 1.0, 0.0, "conducted"),
    ("fcc15.247-902-928 0.25 W, 49 ch", "fcc15.247-902-928", "power", G915, 49, {}, 0.25, 0.0, "conducted"),
    ("fcc15.247-902-928 0.25 W, 25 ch", "fcc15.247-902-928", "power", G915, 25, {}, 0.25, 0.0, "conducted"),
    # RSS-247 [mem]: Canada as the US.
    ("rss247-902-928 1 W", "rss247-902-928", "power", G915, 50, {}, 1.0, 0.0, "conducted"),
    ("rss247-902-928 0.25 W", "rss247-902-928", "power", G915, 30, {}, 0.25, 0.0, "conducted"),
    # 47 CFR 15.247(b)(1) [mem]: 2400-2483.5 MHz, 1 W with at least 75 non-overlapping channels, else 0.125 W.
    ("fcc15.247-2400-2483.5 1 W", "fcc15.247-2400-2483.5", "power", G2400, 75, dict(bandwidth_hz=1 * MHZ), 1.0, 0.0, "conducted"),
    ("fcc15.247-2400-2483.5 0.125 W", "fcc15.247-2400-2483.5", "power", G2400, 74, dict(bandwidth_hz=1 * MHZ), 0.125, 0.0, "conducted"),
    ("rss247-2400-2483.5 1 W", "rss247-2400-2483.5", "power", G2400, 75, dict(bandwidth_hz=1 * MHZ), 1.0, 0.0, "conducted"),
    ("rss247-2400-2483.5 0.125 W", "rss247-2400-2483.5", "power", G2400, 20, dict(bandwidth_hz=1 * MHZ), 0.125, 0.0, "conducted"),
    # 47 CFR 15.247(b)(1) [mem, seen quoted]: 5725-5850 MHz, 1 W.
    ("fcc15.247-5725-5850 1 W", "fcc15.247-5725-5850", "power", G5800, 75, dict(bandwidth_hz=1 * MHZ), 1.0, 0.0, "conducted"),
    ("rss247-5725-5850 1 W", "rss247-5725-5850", "power", G5800, 75, dict(bandwidth_hz=1 * MHZ), 1.0, 0.0, "conducted"),
    # 47 CFR 15.247(b)(4) [mem, seen quoted]: above 6 dBi the conducted limit falls by the dB above 6 dBi.
    ("fcc15.247-902-928 1 W, 9 dBi", "fcc15.247-902-928", "power", G915, 50, dict(antenna_gain_dbi=9.0), 1.0, 3.0, "conducted"),
    ("fcc15.247-902-928 0.25 W, 7.5 dBi", "fcc15.247-902-928", "power", G915, 30, dict(antenna_gain_dbi=7.5), 0.25, 1.5, "conducted"),
    ("fcc15.247-2400-2483.5 0.125 W, 9 dBi", "fcc15.247-2400-2483.5", "power", G2400, 20, dict(bandwidth_hz=1 * MHZ, antenna_gain_dbi=9.0),
     0.125, 3.0, "conducted"),
    ("fcc15.247-5725-5850 1 W, 14 dBi", "fcc15.247-5725-5850", "power", G5800, 75, dict(bandwidth_hz=1 * MHZ, antenna_gain_dbi=14.0),
     1.0, 8.0, "conducted"),
    ("rss247-2400-2483.5 1 W, 10 dBi", "rss247-2400-2483.5", "power", G2400, 75, dict(bandwidth_hz=1 * MHZ, antenna_gain_dbi=10.0),
     1.0, 4.0, "conducted"),
    # 47 CFR 15.247(b)(4): 6 dBi itself is not above 6 dBi.
    ("fcc15.247-902-928 1 W, 6 dBi", "fcc15.247-902-928", "power", G915, 50, dict(antenna_gain_dbi=6.0), 1.0, 0.0, "conducted"),
    # 47 CFR 15.247(c)(1)(i) [mem, seen quoted; check]: fixed point-to-point at 2400-2483.5 MHz, 1 dB less per
    # 3 dB of gain above 6 dBi (read proportionally).
    ("fcc15.247-2400-2483.5 p2p 1 W, 12 dBi", "fcc15.247-2400-2483.5", "power", G2400, 75,
     dict(bandwidth_hz=1 * MHZ, antenna_gain_dbi=12.0, fixed_point_to_point=True), 1.0, 2.0, "conducted"),
    ("fcc15.247-2400-2483.5 p2p 0.125 W, 24 dBi", "fcc15.247-2400-2483.5", "power", G2400, 20,
     dict(bandwidth_hz=1 * MHZ, antenna_gain_dbi=24.0, fixed_point_to_point=True), 0.125, 6.0, "conducted"),
    ("fcc15.247-2400-2483.5 p2p 1 W, 7.5 dBi", "fcc15.247-2400-2483.5", "power", G2400, 75,
     dict(bandwidth_hz=1 * MHZ, antenna_gain_dbi=7.5, fixed_point_to_point=True), 1.0, 0.5, "conducted"),
    # 47 CFR 15.247(c)(1)(ii) [mem, seen quoted; check]: fixed point-to-point at 5725-5850 MHz, no reduction.
    ("fcc15.247-5725-5850 p2p 1 W, 23 dBi", "fcc15.247-5725-5850", "power", G5800, 75,
     dict(bandwidth_hz=1 * MHZ, antenna_gain_dbi=23.0, fixed_point_to_point=True), 1.0, 0.0, "conducted"),
    # 15.247(c)(1) has no 902-928 MHz provision: the declaration leaves (b)(4)'s dB for dB.
    ("fcc15.247-902-928 p2p 1 W, 9 dBi", "fcc15.247-902-928", "power", G915, 50,
     dict(antenna_gain_dbi=9.0, fixed_point_to_point=True), 1.0, 3.0, "conducted"),
    # RSS-247's point-to-point provisions are not encoded: Canada keeps dB for dB.
    ("rss247-2400-2483.5 p2p 1 W, 12 dBi", "rss247-2400-2483.5", "power", G2400, 75,
     dict(bandwidth_hz=1 * MHZ, antenna_gain_dbi=12.0, fixed_point_to_point=True), 1.0, 6.0, "conducted"),
    ("rss247-5725-5850 p2p 1 W, 12 dBi", "rss247-5725-5850", "power", G5800, 75,
     dict(bandwidth_hz=1 * MHZ, antenna_gain_dbi=12.0, fixed_point_to_point=True), 1.0, 6.0, "conducted"),
    # RSS-247 [mem]: 902-928 MHz e.i.r.p. caps, 4 W with at least 50 channels, 1 W with 25-49.
    ("rss247-902-928 e.i.r.p. 4 W", "rss247-902-928", "eirp", G915, 50, dict(antenna_gain_dbi=6.0), 4.0, 0.0, "eirp"),
    ("rss247-902-928 e.i.r.p. 1 W", "rss247-902-928", "eirp", G915, 25, dict(antenna_gain_dbi=3.0), 1.0, 0.0, "eirp"),
    # ETSI EN 300 328 V2.2.2 [partly seen]: 20 dBm (100 mW) e.i.r.p., adaptive or not.
    ("en300328-2400-2483.5 adaptive 100 mW", "en300328-2400-2483.5-adaptive", "eirp", G2400, 15, dict(bandwidth_hz=1 * MHZ,
                                                                            antenna_gain_dbi=3.0), 0.1, 0.0, "eirp"),
    ("en300328-2400-2483.5 non-adaptive 100 mW", "en300328-2400-2483.5-nonadaptive", "eirp", G2400, 15,
     dict(bandwidth_hz=1 * MHZ, antenna_gain_dbi=3.0), 0.1, 0.0, "eirp"),
    # CEPT ERC Rec 70-03 Annex 1: 868.0-868.6 MHz 25 mW [partly seen]; 869.4-869.65 MHz 500 mW [partly seen];
    # 869.7-870.0 MHz 5 mW [from memory]; e.r.p.
    ("erc7003-863-870 868.0 25 mW", "erc7003-863-870", "erp", (868.05 * MHZ, 100 * KHZ), 6, dict(bandwidth_hz=100 * KHZ), 0.025, 0.0,
     "erp"),
    ("erc7003-863-870 869.4 500 mW", "erc7003-863-870", "erp", (869.4125 * MHZ, 25 * KHZ), 10,
     dict(bandwidth_hz=25 * KHZ, activity_fraction=0.1, dwell_s=0.1, packet_airtime_s=0.1), 0.5, 0.0, "erp"),
    ("erc7003-863-870 869.7 5 mW", "erc7003-863-870", "erp", (869.7125 * MHZ, 25 * KHZ), 8,
     dict(bandwidth_hz=25 * KHZ, activity_fraction=1.0, antenna_gain_dbi=2.0), 0.005, 0.0, "erp"),
]


def _system_at(level_dbm: float, kw: dict, bounds: str) -> System:
    """A system whose bounded quantity (conducted power, e.i.r.p. or e.r.p.) is `level_dbm`."""
    gain = kw.get("antenna_gain_dbi", 0.0)
    tx = {"conducted": level_dbm, "eirp": level_dbm - gain, "erp": level_dbm + DIPOLE_DBI - gain}[bounds]
    return make_system(**dict(kw, tx_power_dbm=tx))


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
@pytest.mark.parametrize("ratio, expected", [(1 - 1e-6, "pass"), (1.0, "pass"), (1 + 1e-6, "fail")])
def test_limit_at_its_boundary(case, ratio, expected):
    _, pid, key, (first, spacing), n, kw, watts, cut_db, bounds = case
    level = dbm(watts * ratio) - cut_db
    f = run(pid, _system_at(level, kw, bounds), centres(first, spacing, n))[key]
    assert f.status == expected, f.message
    assert f.limit == pytest.approx(dbm(watts) - cut_db, abs=1e-9)


# The rounded levels a user might type for a limit: each is above the stated watts and must fail.
@pytest.mark.parametrize("pid, key, grid, n, kw, typed_dbm", [
    ("fcc15.247-902-928", "power", G915, 30, {}, 24.0),      # 15.247(b)(2): 0.25 W = 23.979 dBm; 24 dBm = 251.2 mW
    ("fcc15.247-902-928", "power", G915, 30, {}, 23.99),     # 250.6 mW (issue 11)
    ("fcc15.247-2400-2483.5", "power", G2400, 20, dict(bandwidth_hz=1 * MHZ), 21.0),   # 15.247(b)(1): 0.125 W = 20.969 dBm
    ("fcc15.247-2400-2483.5", "power", G2400, 20, dict(bandwidth_hz=1 * MHZ), 20.97),  # 125.03 mW
    ("rss247-902-928", "eirp", G915, 50, {}, 36.03),      # RSS-247: 4 W = 36.021 dBm; 36.03 dBm = 4.009 W
])
def test_rounded_dbm_above_the_watts_fails(pid, key, grid, n, kw, typed_dbm):
    f = run(pid, make_system(**dict(kw, tx_power_dbm=typed_dbm)), centres(*grid, n))[key]
    assert f.status == "fail", f.message


# The message shows why a level fails (issue 11: "18.0 dBm conducted, at most 18.0 dBm -> fail").
def test_messages_show_the_difference():
    f = run("fcc15.247-902-928", make_system(tx_power_dbm=23.99), centres(*G915, 30))["power"]
    assert f.message.startswith("23.990 dBm (250.6 mW) conducted, at most 23.979 dBm (250 mW")
    # 15.247(b)(1) 0.125 W less 3 dB for a 9 dBi antenna (15.247(b)(4)): 17.969 dBm, 62.65 mW.
    f = run("fcc15.247-2400-2483.5", make_system(tx_power_dbm=18.0, antenna_gain_dbi=9.0, bandwidth_hz=1 * MHZ),
            centres(*G2400, 20))["power"]
    assert f.status == "fail"
    assert f.message.startswith("18.000 dBm (63.1 mW) conducted, at most 17.969 dBm (62.65 mW")
    assert "0.125 W" in f.message and "15.247(b)(4)" in f.message
    # A level a hair above the limit prints with as many digits as it takes to differ.
    hair = dbm(0.25) + 1e-7
    f = run("fcc15.247-902-928", make_system(tx_power_dbm=hair), centres(*G915, 30))["power"]
    measured, limit = f.message.split(" conducted, at most ")
    assert f.status == "fail" and measured.split(" dBm")[0] != limit.split(" dBm")[0]
    assert float(measured.split(" dBm")[0]) > float(limit.split(" dBm")[0])


# 47 CFR 15.247(a)(1) [pub]: the 2/3-bandwidth separation needs an output "no greater than 125 mW".
@pytest.mark.parametrize("ratio, expected", [(1 - 1e-6, "pass"), (1.0, "pass"), (1 + 1e-6, "fail")])
def test_two_thirds_separation_at_125_mw(ratio, expected):
    s = make_system(bandwidth_hz=1 * MHZ, tx_power_dbm=dbm(0.125 * ratio))
    f = run("fcc15.247-2400-2483.5", s, centres(2402 * MHZ, 1 * MHZ * 2 / 3, 20))["separation"]
    assert f.status == expected, f.message


# EN 300 328 V2.2.2 non-adaptive [from memory]: medium utilisation = duty x e.i.r.p. / 100 mW <= 10 %.
@pytest.mark.parametrize("ratio, expected", [(1 - 1e-6, "pass"), (1.0, "pass"), (1 + 1e-6, "fail")])
def test_medium_utilisation_boundary_in_milliwatts(ratio, expected):
    s = make_system(bandwidth_hz=1 * MHZ, tx_power_dbm=dbm(0.05 * ratio), activity_fraction=0.2,
                    dwell_s=0.005, packet_airtime_s=0.005)  # 50 mW at 20 %: 10 %
    f = run("en300328-2400-2483.5-nonadaptive", s, centres(*G2400, 15))["medium-utilisation"]
    assert f.status == expected, f.message


# README's table of limits states every encoded limit with its watts and exact dBm (documentation matches code).
def test_readme_table_states_every_encoded_limit():
    from pathlib import Path

    from cohop.regulatory import power
    from cohop.regulatory.profiles import EU868_SUBBANDS

    readme = (Path(__file__).resolve().parents[2] / "README.md").read_text()
    rows = [ln for ln in readme.splitlines() if ln.startswith("| ") and " | " in ln]
    stated = [(w, c) for w, c in ((p.watts, p.citation) for p in vars(power).values()
                                  if isinstance(p, power.PowerLimit) and p is not power.EU_MU_REFERENCE)]
    stated += [(b.max_erp_w, "ERC Rec 70-03 Annex 1") for b in EU868_SUBBANDS]
    for watts, citation in stated:
        cells = f"| {watts:g} | {dbm(watts):.3f} | {citation} |"
        assert any(cells in row for row in rows), cells
