"""The profile catalogue: band edges, rule metadata (citation, certainty) and cautions.

Reference: the project's rule table (47 CFR 15.247, RSS-247, ETSI EN 300 328 V2.2.2, ERC Rec 70-03).
"""

from __future__ import annotations

import numpy as np
import pytest

from cohop.regulatory import PROFILES, check_compliance, get_profile
from cohop.site import Band, System

MHZ = 1e6
CERTAINTIES = {"published", "seen quoted", "partly seen", "from memory", "common practice"}
US = ["fcc15.247-902-928", "fcc15.247-2400-2483.5", "fcc15.247-5725-5850"]
CA = ["rss247-902-928", "rss247-2400-2483.5", "rss247-5725-5850"]
EU = ["en300328-2400-2483.5-adaptive", "en300328-2400-2483.5-nonadaptive", "erc7003-863-870"]
REGULATED = US + CA + EU

# Band edges from the rule table: 902-928 MHz (15.247(a)(1)(i)), 2400-2483.5 MHz (15.247(a)(1)(iii),
# EN 300 328), 5725-5850 MHz (15.247, from memory), 863-870 MHz (ERC Rec 70-03 Annex 1).
EDGES_MHZ = {
    "fcc15.247-902-928": (902, 928), "rss247-902-928": (902, 928),
    "fcc15.247-2400-2483.5": (2400, 2483.5), "rss247-2400-2483.5": (2400, 2483.5),
    "fcc15.247-5725-5850": (5725, 5850), "rss247-5725-5850": (5725, 5850),
    "en300328-2400-2483.5-adaptive": (2400, 2483.5), "en300328-2400-2483.5-nonadaptive": (2400, 2483.5),
    "erc7003-863-870": (863, 870),
}


def suffixes(pid: str) -> set[str]:
    return {r.kind for r in PROFILES[pid].rules}


def rule(pid: str, suffix: str):
    (r,) = [r for r in PROFILES[pid].rules if r.id == f"{pid}.{suffix}"]
    return r


# The rule table lists exactly these profiles, plus a custom one without limits.
def test_catalogue_ids():
    assert set(PROFILES) == set(REGULATED) | {"custom"}
    for pid, p in PROFILES.items():
        assert p.id == pid and get_profile(pid) is p and p.name


# Band edges per the rule table (sources above).
@pytest.mark.parametrize("pid", sorted(EDGES_MHZ))
def test_band_edges_match_table(pid):
    band = PROFILES[pid].band
    assert (band.low_hz, band.high_hz) == (EDGES_MHZ[pid][0] * MHZ, EDGES_MHZ[pid][1] * MHZ)


# Grid fit (common practice): every profile, custom included, checks the band fit.
@pytest.mark.parametrize("pid", sorted(PROFILES))
def test_every_profile_has_band_fit(pid):
    assert "band-fit" in suffixes(pid)
    assert rule(pid, "band-fit").certainty == "common practice"


# Every rule states where it comes from and how sure we are (rule table certainty column).
@pytest.mark.parametrize("pid", sorted(PROFILES))
def test_every_rule_has_citation_and_certainty(pid):
    rules = PROFILES[pid].rules
    assert len({r.id for r in rules}) == len(rules)
    for r in rules:
        assert r.id.startswith(pid + ".")
        assert r.citation.strip() and r.title.strip() and r.summary.strip(), r.id
        assert r.certainty in CERTAINTIES, (r.id, r.certainty)


# 47 CFR 15.247(h) caution applies to US and Canadian profiles only (DEVELOPERS.md, Cautions).
@pytest.mark.parametrize("pid", REGULATED)
def test_coordination_caution(pid):
    p = PROFILES[pid]
    assert p.coordination_caution is (p.region in ("US", "CA"))
    assert p.region == {"fcc15.247": "US", "rss247": "CA", "en300328": "EU", "erc7003": "EU"}[pid.split("-")[0]]


# Which rules each profile encodes, per the rule table.
# Every regulated profile says what a fixed point-to-point declaration does ("point-to-point"); the finding
# appears only for systems that make it (tests/regulatory/test_point_to_point.py).
P2P = "point-to-point"


@pytest.mark.parametrize("pid, expected", [
    ("fcc15.247-902-928", {"band-fit", "channels", "bandwidth", "separation", "occupancy", "power", "sequence", P2P}),
    ("rss247-902-928", {"band-fit", "channels", "bandwidth", "separation", "occupancy", "power", "sequence", "eirp", P2P}),
    ("fcc15.247-2400-2483.5", {"band-fit", "channels", "separation", "occupancy", "power", "sequence", P2P}),
    ("rss247-2400-2483.5", {"band-fit", "channels", "separation", "occupancy", "power", "sequence", P2P}),
    ("fcc15.247-5725-5850", {"band-fit", "channels", "bandwidth", "separation", "occupancy", "power", "sequence", P2P}),
    ("rss247-5725-5850", {"band-fit", "channels", "bandwidth", "separation", "occupancy", "power", "sequence", P2P}),
    ("en300328-2400-2483.5-nonadaptive", {"band-fit", "channels", "separation", "occupancy", "eirp", "medium-utilisation", P2P}),
    ("en300328-2400-2483.5-adaptive", {"band-fit", "channels", "separation", "occupancy", "eirp", P2P}),
    ("erc7003-863-870", {"band-fit", "erp", "duty-cycle", "fhss", P2P}),
    ("custom", {"band-fit"}),
])
def test_rule_sets(pid, expected):
    assert suffixes(pid) == expected


# 47 CFR 15.247 paragraphs named in the rule table.
@pytest.mark.parametrize("pid, suffix, paragraph", [
    ("fcc15.247-902-928", "channels", "15.247(a)(1)(i)"), ("fcc15.247-902-928", "bandwidth", "15.247(a)(1)(i)"),
    ("fcc15.247-902-928", "occupancy", "15.247(a)(1)(i)"), ("fcc15.247-902-928", "separation", "15.247(a)(1)"),
    ("fcc15.247-902-928", "power", "15.247(b)(2)"), ("fcc15.247-902-928", "power", "(b)(4)"), ("fcc15.247-902-928", "sequence", "15.247(a)(1)"),
    ("fcc15.247-2400-2483.5", "channels", "15.247(a)(1)(iii)"), ("fcc15.247-2400-2483.5", "occupancy", "15.247(a)(1)(iii)"),
    ("fcc15.247-2400-2483.5", "power", "15.247(b)(1)"), ("fcc15.247-2400-2483.5", "power", "(b)(4)"), ("fcc15.247-5725-5850", "power", "(b)(4)"),
    ("fcc15.247-2400-2483.5", "power", "(c)(1)(i)"), ("fcc15.247-5725-5850", "power", "(c)(1)(ii)"),
    ("fcc15.247-902-928", P2P, "15.247(c)(1)"), ("fcc15.247-2400-2483.5", P2P, "15.247(c)(1)(i)"), ("fcc15.247-5725-5850", P2P, "15.247(c)(1)(ii)"),
])
def test_us_citations(pid, suffix, paragraph):
    assert paragraph in rule(pid, suffix).citation


# Certainty column of the rule table for the US profiles.
@pytest.mark.parametrize("pid, suffix, certainty", [
    ("fcc15.247-902-928", "channels", "published"), ("fcc15.247-902-928", "bandwidth", "published"),
    ("fcc15.247-902-928", "occupancy", "published"), ("fcc15.247-902-928", "separation", "published"),
    ("fcc15.247-902-928", "power", "seen quoted"),
    ("fcc15.247-2400-2483.5", "channels", "published"), ("fcc15.247-2400-2483.5", "occupancy", "published"),
    ("fcc15.247-2400-2483.5", "separation", "published"), ("fcc15.247-2400-2483.5", "power", "from memory"),
    ("fcc15.247-5725-5850", "channels", "from memory"), ("fcc15.247-5725-5850", "bandwidth", "from memory"),
    ("fcc15.247-5725-5850", "occupancy", "from memory"), ("fcc15.247-5725-5850", "power", "from memory"),
    # 15.247(c)(1) fixed point-to-point [mem, seen quoted; check]
    ("fcc15.247-902-928", P2P, "seen quoted"), ("fcc15.247-2400-2483.5", P2P, "seen quoted"), ("fcc15.247-5725-5850", P2P, "seen quoted"),
])
def test_us_certainties(pid, suffix, certainty):
    assert rule(pid, suffix).certainty == certainty


# RSS-247 (Canada, "as US, marked from memory"): the rules that cohop implements itself
# (channels, bandwidth, occupancy, power, e.i.r.p.) are from memory and cite RSS-247.
@pytest.mark.parametrize("pid", CA)
def test_canadian_numeric_rules_from_memory(pid):
    for r in PROFILES[pid].rules:
        if r.kind in {"channels", "bandwidth", "occupancy", "power", "eirp"}:
            assert r.certainty == "from memory" and "RSS-247" in r.citation, r.id


# RSS-247 (from memory): "as US, marked from memory" covers every Canadian regulatory rule, including
# channel separation and the pseudo-random sequence rule; band fit is common practice, not a rule.
@pytest.mark.parametrize("pid", CA)
def test_every_canadian_rule_from_memory_and_cites_rss247(pid):
    for r in PROFILES[pid].rules:
        if not r.id.endswith(".band-fit"):
            assert r.certainty == "from memory" and "RSS-247" in r.citation, (r.id, r.certainty, r.citation)


# ETSI EN 300 328 V2.2.2 [partly seen] and ERC Rec 70-03 Annex 1 [partly seen]; medium utilisation and
# the EN 300 220-2 note are marked from memory.
@pytest.mark.parametrize("pid", EU)
def test_eu_citations_and_certainties(pid):
    for r in PROFILES[pid].rules:
        suffix = r.kind
        if suffix == "band-fit":
            continue
        if pid.startswith("en300328-2400-2483.5"):
            assert "EN 300 328" in r.citation and "V2.2.2" in r.citation
        elif suffix == "fhss":
            assert "EN 300 220-2" in r.citation
        else:
            assert "ERC Rec 70-03" in r.citation and "Annex 1" in r.citation
        expected = "from memory" if suffix in {"medium-utilisation", "fhss"} else "partly seen"
        assert r.certainty == expected, r.id


# Custom profile: no band of its own, only the band fit against the band the request gives.
def test_custom_profile_checks_only_request_band():
    p = PROFILES["custom"]
    assert p.band is None and p.region == "custom" and p.coordination_caution is False
    s = System(id="s", tx_power_dbm=40.0, antenna_gain_dbi=10.0, bandwidth_hz=1e6, dwell_s=1.0,
               packet_airtime_s=1.0, activity_fraction=1.0, required_sir_db=10.0, rejection=(), retry_limit=0)
    c = np.array([100.5e6, 101.5e6])
    (inside,) = check_compliance(p, s, np.arange(2), c, Band(100e6, 102e6))
    (outside,) = check_compliance(p, s, np.arange(2), c, Band(100e6, 101.9e6))
    assert (inside.status, outside.status) == ("pass", "fail")
