"""The fixed point-to-point declaration (47 CFR 15.247(c)(1)): request field, findings, and what it changes.

Rule text (47 CFR 15.247(c)(1), from memory, seen quoted; check the current eCFR text): 2400-2483.5 MHz systems used exclusively
for fixed point-to-point operation may use antennas above 6 dBi with 1 dB less conducted power per 3 dB of
gain above 6 dBi; 5725-5850 MHz ones with no reduction. The limits at the boundary are in test_power_limits.py.
"""

from __future__ import annotations

import marshmallow as ma
import pytest

from cohop.api.app import create_app
from cohop.api.schemas.site import SiteSchema
from cohop.site import System
from tests import sites
from tests.regulatory.findings import centres, run

KHZ, MHZ = 1e3, 1e6
# (profile, first centre, spacing, channels, bandwidth) of a compliant grid per profile
GRIDS = {
    "fcc15.247-902-928": (902.5 * MHZ, 300 * KHZ, 50, 300 * KHZ), "rss247-902-928": (902.5 * MHZ, 300 * KHZ, 50, 300 * KHZ),
    "fcc15.247-2400-2483.5": (2402 * MHZ, 1 * MHZ, 75, 1 * MHZ), "rss247-2400-2483.5": (2402 * MHZ, 1 * MHZ, 75, 1 * MHZ),
    "fcc15.247-5725-5850": (5726 * MHZ, 1.5 * MHZ, 75, 1 * MHZ), "rss247-5725-5850": (5726 * MHZ, 1.5 * MHZ, 75, 1 * MHZ),
    "en300328-2400-2483.5-adaptive": (2402 * MHZ, 1 * MHZ, 15, 1 * MHZ), "en300328-2400-2483.5-nonadaptive": (2402 * MHZ, 1 * MHZ, 15, 1 * MHZ),
    "erc7003-863-870": (869.4125 * MHZ, 25 * KHZ, 10, 25 * KHZ),
}


def make_system(**kw) -> System:
    base = dict(id="s1", tx_power_dbm=10.0, antenna_gain_dbi=12.0, bandwidth_hz=1 * MHZ, dwell_s=0.1,
                packet_airtime_s=0.1, activity_fraction=0.01, required_sir_db=10.0, rejection=(), retry_limit=0)
    base.update(kw)
    return System(**base)


def findings(pid: str, **kw) -> dict:
    first, spacing, n, bw = GRIDS[pid]
    return run(pid, make_system(bandwidth_hz=bw, **kw), centres(first, spacing, n))


# The flag defaults to false: no point-to-point finding at all, and the rules are the plain ones.
@pytest.mark.parametrize("pid", sorted(GRIDS))
def test_no_finding_without_the_declaration(pid):
    assert "point-to-point" not in findings(pid)


# 15.247(c)(1)(i)-(ii): where the declaration relaxes the limit, exclusive fixed point-to-point use cannot be
# checked here, so the finding is a warning that says so (15.247(c)(1)(iii), from memory: no point-to-multipoint,
# omnidirectional or co-located transmitters sending the same information).
@pytest.mark.parametrize("pid, cut", [("fcc15.247-2400-2483.5", "2.000 dB"), ("fcc15.247-5725-5850", "0.000 dB")])
def test_relaxing_declaration_is_a_warning_with_its_reason(pid, cut):
    f = findings(pid, fixed_point_to_point=True)["point-to-point"]
    assert f.status == "warning"
    assert f.message.startswith("not checked: ") and "operator's declaration" in f.message
    assert f"lowered {cut} for the 12.000 dBi antenna, instead of 6.000 dB" in f.message
    assert "15.247(c)(1)" in f.rule.citation and f.rule.certainty == "seen quoted"


# Elsewhere the flag does not change the rule, and a finding says so (issue 11 item 4).
@pytest.mark.parametrize("pid, why", [
    ("fcc15.247-902-928", "only in 2400-2483.5 and 5725-5850 MHz"),  # 15.247(c)(1) [seen quoted]
    ("rss247-902-928", "RSS-247's point-to-point provisions were not checked"),  # RSS-247 not encoded (from memory)
    ("rss247-2400-2483.5", "RSS-247's point-to-point provisions were not checked"),
    ("rss247-5725-5850", "RSS-247's point-to-point provisions were not checked"),
    ("en300328-2400-2483.5-adaptive", "EN 300 328"),  # EN 300 328 V2.2.2 [partly seen]: e.i.r.p. includes the antenna
    ("en300328-2400-2483.5-nonadaptive", "EN 300 328"),
    ("erc7003-863-870", "ERC Rec 70-03"),  # ERC Rec 70-03 Annex 1 [partly seen]: e.r.p. includes the antenna
])
def test_declaration_without_effect_says_so(pid, why):
    declared, plain = findings(pid, fixed_point_to_point=True), findings(pid)
    f = declared.pop("point-to-point")
    assert f.status == "pass" and "changes nothing here" in f.message and why in f.message
    assert {k: (g.status, g.limit) for k, g in declared.items()} == {k: (g.status, g.limit) for k, g in plain.items()}


# 15.247(c)(1)(i): at 6 dBi or less there is nothing to relax; the limit is the stated watts.
def test_2400_point_to_point_at_6_dbi_has_no_reduction():
    f = findings("fcc15.247-2400-2483.5", fixed_point_to_point=True, antenna_gain_dbi=6.0, tx_power_dbm=30.0)
    assert f["power"].status == "pass" and f["power"].limit == pytest.approx(30.0, abs=1e-12)


# 15.247(c)(1)(i) [seen quoted; check] against (b)(4): a 1 W, 15 dBi link at 2.4 GHz is allowed 27 dBm
# conducted as fixed point-to-point (9 dB above 6 dBi: 3 dB less) but 21 dBm otherwise (9 dB less).
def test_2400_point_to_point_allows_the_link_that_dB_for_dB_refuses():
    link = dict(antenna_gain_dbi=15.0, tx_power_dbm=27.0)
    assert findings("fcc15.247-2400-2483.5", fixed_point_to_point=True, **link)["power"].status == "pass"
    plain = findings("fcc15.247-2400-2483.5", **link)["power"]
    assert plain.status == "fail" and plain.limit == pytest.approx(21.0, abs=1e-12)


# The request field: JSON true/false, default false (README's site section).
def test_request_field_loads_and_defaults():
    body = sites.site([sites.system("a"), sites.system("b", fixed_point_to_point=True)])
    a, b = sites.load(body).systems
    assert (a.fixed_point_to_point, b.fixed_point_to_point) == (False, True)
    for wrong in ("yes", 1, 0, None):  # JSON true/false only, through the request schema
        with pytest.raises(ma.ValidationError) as err:
            SiteSchema().load(sites.site([sites.system("a", fixed_point_to_point=wrong)]))
        assert "fixed_point_to_point" in str(err.value.messages)


# End to end: the assessment answer carries the point-to-point finding with its citation and certainty.
def test_assessment_answer_carries_the_finding():
    body = sites.site([sites.system("link", fixed_point_to_point=True, antenna_gain_dbi=12.0, tx_power_dbm=10.0)],
                      coupling_loss_db=None, n_channels=75, profile="fcc15.247-2400-2483.5", band=None)
    reply = create_app({"TESTING": True}).test_client().post("/v1/assessments", json={"site": body})
    assert reply.status_code == 200, reply.get_json()
    found = {f["rule"]: f for f in reply.get_json()["systems"][0]["compliance"]["findings"]}
    f = found["fcc15.247-2400-2483.5.point-to-point"]
    assert (f["status"], f["certainty"]) == ("warning", "seen quoted") and "15.247(c)(1)" in f["citation"]
    assert "fixed point-to-point" in found["fcc15.247-2400-2483.5.power"]["message"]
