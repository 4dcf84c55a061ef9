"""US (47 CFR 15.247) and Canadian (RSS-247) FHSS profiles: compliant sets and rule boundaries.

Sources are the project's rule table; each test names the paragraph it checks.
"""

from __future__ import annotations

import math

import pytest

from cohop.regulatory import PROFILES
from cohop.site import System
from tests.regulatory.findings import centres, run, statuses

KHZ, MHZ = 1e3, 1e6


def make_system(**kw) -> System:
    base = dict(id="s1", tx_power_dbm=20.0, antenna_gain_dbi=0.0, bandwidth_hz=150 * KHZ, dwell_s=0.4,
                packet_airtime_s=0.4, activity_fraction=1.0, required_sir_db=10.0, rejection=(), retry_limit=0)
    base.update(kw)
    return System(**base)


# One compliant set per profile: (system overrides, first centre, spacing, count).
COMPLIANT = {
    "fcc15.247-902-928": (dict(bandwidth_hz=150 * KHZ, tx_power_dbm=30.0, antenna_gain_dbi=6.0), 902.5 * MHZ, 200 * KHZ, 50),
    "rss247-902-928": (dict(bandwidth_hz=150 * KHZ, tx_power_dbm=30.0, antenna_gain_dbi=6.0), 902.5 * MHZ, 200 * KHZ, 50),
    "fcc15.247-2400-2483.5": (dict(bandwidth_hz=1 * MHZ, tx_power_dbm=30.0, antenna_gain_dbi=6.0), 2402 * MHZ, 1 * MHZ, 75),
    "rss247-2400-2483.5": (dict(bandwidth_hz=1 * MHZ, tx_power_dbm=30.0, antenna_gain_dbi=6.0), 2402 * MHZ, 1 * MHZ, 75),
    "fcc15.247-5725-5850": (dict(bandwidth_hz=1 * MHZ, tx_power_dbm=30.0, antenna_gain_dbi=6.0), 5726 * MHZ, 1.5 * MHZ, 75),
    "rss247-5725-5850": (dict(bandwidth_hz=1 * MHZ, tx_power_dbm=30.0, antenna_gain_dbi=6.0), 5726 * MHZ, 1.5 * MHZ, 75),
}


# 47 CFR 15.247(a)(1), (a)(1)(i)-(iii), (b)(1)-(b)(4); RSS-247 for ca-* (from memory).
@pytest.mark.parametrize("pid", sorted(COMPLIANT))
def test_compliant_hop_set_passes_all_but_sequence_warning(pid):
    kw, first, spacing, n = COMPLIANT[pid]
    f = run(pid, make_system(**kw), centres(first, spacing, n))
    assert f.pop("sequence").status == "warning"
    assert all(s == "pass" for s in statuses(f).values()), statuses(f)


# 47 CFR 15.247(a)(1): pseudo-random order and equal use cannot be seen from a hop set.
@pytest.mark.parametrize("pid", sorted(COMPLIANT))
def test_sequence_rule_is_a_not_checked_warning(pid):
    kw, first, spacing, n = COMPLIANT[pid]
    finding = run(pid, make_system(**kw), centres(first, spacing, n))["sequence"]
    assert finding.status == "warning" and "not checked" in finding.message


# 47 CFR 15.247(a)(1)(i) [published]: below 250 kHz 20 dB BW, at least 50 channels.
# Canada: RSS-247, as the US (from memory).
@pytest.mark.parametrize("pid", ["fcc15.247-902-928", "rss247-902-928"])
@pytest.mark.parametrize("n, expected", [(50, "pass"), (49, "fail")])
def test_915_150khz_needs_50_channels(pid, n, expected):
    f = run(pid, make_system(bandwidth_hz=150 * KHZ), centres(902.5 * MHZ, 200 * KHZ, n))
    assert f["channels"].status == expected
    assert f["channels"].limit == 50


# 47 CFR 15.247(a)(1)(i) [published]: 250-500 kHz 20 dB BW, at least 25 channels.
@pytest.mark.parametrize("pid", ["fcc15.247-902-928", "rss247-902-928"])
@pytest.mark.parametrize("n, expected", [(25, "pass"), (24, "fail")])
def test_915_300khz_needs_25_channels(pid, n, expected):
    f = run(pid, make_system(bandwidth_hz=300 * KHZ), centres(902.5 * MHZ, 300 * KHZ, n))
    assert f["channels"].status == expected
    assert f["channels"].limit == 25


# 47 CFR 15.247(a)(1)(i) [published]: "below 250 kHz" -> 50 channels and 20 s; 250 kHz itself -> 25 and 10 s.
def test_915_250khz_boundary_switches_count_and_window():
    at = run("fcc15.247-902-928", make_system(bandwidth_hz=250 * KHZ), centres(902.5 * MHZ, 250 * KHZ, 25))
    assert (at["channels"].status, at["channels"].limit) == ("pass", 25)
    assert at["occupancy"].status == "pass"  # period 25 x 0.4 s = 10 s window: 0.4 s
    below = run("fcc15.247-902-928", make_system(bandwidth_hz=249.999 * KHZ), centres(902.5 * MHZ, 250 * KHZ, 25))
    assert (below["channels"].status, below["channels"].limit) == ("fail", 50)
    assert below["occupancy"].status == "fail"  # 20 s window over a 10 s period: 0.8 s
    assert below["occupancy"].measured == pytest.approx(0.8)


# 47 CFR 15.247(a)(1)(i) [published]: 20 dB BW at most 500 kHz; no channel count allows more.
def test_915_600khz_fails_bandwidth_and_channel_count():
    f = run("fcc15.247-902-928", make_system(bandwidth_hz=600 * KHZ), centres(902.5 * MHZ, 600 * KHZ, 40))
    assert f["bandwidth"].status == "fail"
    assert f["channels"].status == "fail"
    ok = run("fcc15.247-902-928", make_system(bandwidth_hz=500 * KHZ), centres(902.5 * MHZ, 500 * KHZ, 25))
    assert ok["bandwidth"].status == "pass" and ok["channels"].status == "pass"


# 47 CFR 15.247(a)(1) [published]: separation >= max(25 kHz, 20 dB bandwidth).
@pytest.mark.parametrize("pid", ["fcc15.247-902-928", "fcc15.247-5725-5850", "rss247-902-928"])
def test_separation_equal_to_bandwidth_passes_one_hz_less_fails(pid):
    bw = 150 * KHZ if "915" in pid else 1 * MHZ
    first = PROFILES[pid].band.low_hz + bw
    assert run(pid, make_system(bandwidth_hz=bw), centres(first, bw, 10))["separation"].status == "pass"
    assert run(pid, make_system(bandwidth_hz=bw), centres(first, bw - 1, 10))["separation"].status == "fail"


# 47 CFR 15.247(a)(1) [published]: the 25 kHz floor applies to narrow channels.
def test_separation_25khz_floor():
    s = make_system(bandwidth_hz=20 * KHZ)
    assert run("fcc15.247-902-928", s, centres(903 * MHZ, 25 * KHZ, 60))["separation"].status == "pass"
    f = run("fcc15.247-902-928", s, centres(903 * MHZ, 24.999 * KHZ, 60))["separation"]
    assert f.status == "fail" and f.limit == pytest.approx(25 * KHZ)


# 47 CFR 15.247(a)(1) [published]: in 2400-2483.5 MHz at <= 125 mW, >= max(25 kHz, 2/3 of the 20 dB BW).
@pytest.mark.parametrize("pid", ["fcc15.247-2400-2483.5", "rss247-2400-2483.5"])
def test_two_thirds_rule_at_2400_depends_on_power(pid):
    bw = 1 * MHZ
    two_thirds = bw * 2 / 3
    low = make_system(bandwidth_hz=bw, tx_power_dbm=20.0)
    assert run(pid, low, centres(2402 * MHZ, two_thirds, 20))["separation"].status == "pass"
    assert run(pid, low, centres(2402 * MHZ, two_thirds - 1, 20))["separation"].status == "fail"
    high = make_system(bandwidth_hz=bw, tx_power_dbm=22.0)
    assert run(pid, high, centres(2402 * MHZ, two_thirds, 20))["separation"].status == "fail"
    assert run(pid, high, centres(2402 * MHZ, bw, 20))["separation"].status == "pass"
    exactly_125mw = make_system(bandwidth_hz=bw, tx_power_dbm=10 * math.log10(125))
    assert run(pid, exactly_125mw, centres(2402 * MHZ, two_thirds, 20))["separation"].status == "pass"


# 47 CFR 15.247(a)(1) [published]: the 2/3 relaxation is for 2400-2483.5 MHz only.
def test_two_thirds_rule_not_applied_at_915():
    s = make_system(bandwidth_hz=150 * KHZ, tx_power_dbm=10.0)
    assert run("fcc15.247-902-928", s, centres(903 * MHZ, 100 * KHZ, 50))["separation"].status == "fail"


# 47 CFR 15.247(b)(2) [seen quoted]: 1 W with >= 50 channels, 0.25 W (23.979 dBm, not 24) with 25-49.
@pytest.mark.parametrize("pid", ["fcc15.247-902-928", "rss247-902-928"])
def test_915_power_depends_on_channel_count(pid):
    quarter_watt_dbm = 10 * math.log10(250)
    s30 = make_system(bandwidth_hz=300 * KHZ, tx_power_dbm=30.0)
    s_q = make_system(bandwidth_hz=300 * KHZ, tx_power_dbm=quarter_watt_dbm)
    assert run(pid, s30, centres(902.5 * MHZ, 300 * KHZ, 50))["power"].status == "pass"
    f = run(pid, s30, centres(902.5 * MHZ, 300 * KHZ, 49))["power"]
    assert f.status == "fail" and f.limit == pytest.approx(quarter_watt_dbm, abs=1e-12)
    assert run(pid, s_q, centres(902.5 * MHZ, 300 * KHZ, 49))["power"].status == "pass"
    assert run(pid, s_q, centres(902.5 * MHZ, 300 * KHZ, 25))["power"].status == "pass"
    assert run(pid, s_q, centres(902.5 * MHZ, 300 * KHZ, 24))["power"].status == "fail"


# 47 CFR 15.247(b)(4) [from memory, seen quoted]: above 6 dBi the conducted limit falls dB for dB.
@pytest.mark.parametrize("pid", sorted(COMPLIANT))
def test_antenna_gain_above_6dbi_reduces_power_limit(pid):
    kw, first, spacing, n = COMPLIANT[pid]
    kw = dict(kw, antenna_gain_dbi=9.0)
    f = run(pid, make_system(**dict(kw, tx_power_dbm=30.0)), centres(first, spacing, n))["power"]
    assert f.status == "fail" and f.limit == pytest.approx(27.0)
    assert run(pid, make_system(**dict(kw, tx_power_dbm=27.0)), centres(first, spacing, n))["power"].status == "pass"


# 47 CFR 15.247(b)(1) [from memory]: 1 W needs >= 75 non-overlapping channels, else 0.125 W (20.969 dBm).
@pytest.mark.parametrize("pid", ["fcc15.247-2400-2483.5", "rss247-2400-2483.5"])
def test_2400_one_watt_needs_75_channels(pid):
    s30 = make_system(bandwidth_hz=1 * MHZ, tx_power_dbm=30.0)
    assert run(pid, s30, centres(2402 * MHZ, 1 * MHZ, 75))["power"].status == "pass"
    f = run(pid, s30, centres(2402 * MHZ, 1 * MHZ, 74))["power"]
    assert f.status == "fail" and f.limit == pytest.approx(10 * math.log10(125), abs=1e-12)
    s20 = make_system(bandwidth_hz=1 * MHZ, tx_power_dbm=20.0)
    assert run(pid, s20, centres(2402 * MHZ, 1 * MHZ, 74))["power"].status == "pass"


# 47 CFR 15.247(b)(1) [from memory]: overlapping channels (2/3 spacing) do not count toward the 75.
def test_2400_overlapping_channels_do_not_earn_one_watt():
    s = make_system(bandwidth_hz=1 * MHZ, tx_power_dbm=30.0)
    f = run("fcc15.247-2400-2483.5", s, centres(2402 * MHZ, 0.7 * MHZ, 100))["power"]
    assert f.status == "fail" and f.limit == pytest.approx(10 * math.log10(125), abs=1e-12)


# 47 CFR 15.247(a)(1)(iii) [published]: at least 15 channels in 2400-2483.5 MHz.
@pytest.mark.parametrize("pid", ["fcc15.247-2400-2483.5", "rss247-2400-2483.5"])
@pytest.mark.parametrize("n, expected", [(15, "pass"), (14, "fail")])
def test_2400_needs_15_channels(pid, n, expected):
    f = run(pid, make_system(bandwidth_hz=1 * MHZ), centres(2402 * MHZ, 1 * MHZ, n))
    assert f["channels"].status == expected


# 47 CFR 15.247(a)(1)(i) [published]: <= 0.4 s average occupancy on any channel in any 20 s (below 250 kHz).
@pytest.mark.parametrize("n, dwell, airtime, expected", [
    (50, 0.4, 0.4, "pass"),     # period 20 s, one visit: 0.4 s exactly
    (50, 0.4, 0.45, "fail"),    # 0.45 s per visit: average 0.45 s (airtime > dwell, as the brief states it)
    (40, 0.4, 0.4, "fail"),     # period 16 s: 0.5 s average in 20 s
    (50, 0.3, 0.3, "warning"),  # period 15 s: average 0.4 s, but a 20 s window can see 2 visits = 0.6 s
    (50, 0.2, 0.1, "pass"),     # period 10 s: two visits of 0.1 s
])
def test_915_occupancy(n, dwell, airtime, expected):
    s = make_system(bandwidth_hz=150 * KHZ, dwell_s=dwell, packet_airtime_s=airtime)
    f = run("fcc15.247-902-928", s, centres(902.5 * MHZ, 200 * KHZ, n))["occupancy"]
    assert f.status == expected, f.message
    assert f.measured == pytest.approx(airtime * 20.0 / (n * dwell))


# 47 CFR 15.247(a)(1)(i) [published]: 250-500 kHz -> 0.4 s in any 10 s.
def test_915_wide_occupancy_window_is_10s():
    s = make_system(bandwidth_hz=300 * KHZ, dwell_s=0.4, packet_airtime_s=0.4)
    assert run("fcc15.247-902-928", s, centres(902.5 * MHZ, 300 * KHZ, 25))["occupancy"].status == "pass"
    assert run("fcc15.247-902-928", s, centres(902.5 * MHZ, 300 * KHZ, 20))["occupancy"].status == "fail"


# 47 CFR 15.247(a)(1)(iii) [published]: <= 0.4 s within 0.4 s x channels used. A single 0.5 s visit
# averages 0.4 s over 0.4 s x 15 (period 7.5 s) yet alone exceeds 0.4 s in any window holding it: fail.
@pytest.mark.parametrize("dwell, airtime, expected", [(0.4, 0.4, "pass"), (0.1, 0.1, "pass"),
                                                      (0.4, 0.45, "fail"), (0.3, 0.3, "warning"),
                                                      (0.5, 0.5, "fail")])
def test_2400_occupancy(dwell, airtime, expected):
    s = make_system(bandwidth_hz=1 * MHZ, dwell_s=dwell, packet_airtime_s=airtime)
    f = run("fcc15.247-2400-2483.5", s, centres(2402 * MHZ, 1 * MHZ, 15))["occupancy"]
    assert f.status == expected, f.message


# US 5725-5850 MHz [from memory, seen quoted]: >= 75 channels, BW <= 1 MHz, <= 0.4 s in 30 s, 1 W.
@pytest.mark.parametrize("pid", ["fcc15.247-5725-5850", "rss247-5725-5850"])
def test_5800_rules(pid):
    s = make_system(bandwidth_hz=1 * MHZ, tx_power_dbm=30.0)
    f = run(pid, s, centres(5726 * MHZ, 1.5 * MHZ, 75))
    assert statuses(f)["channels"] == "pass" and f["power"].limit == pytest.approx(30.0)
    assert run(pid, s, centres(5726 * MHZ, 1.5 * MHZ, 74))["channels"].status == "fail"
    wide = make_system(bandwidth_hz=1.001 * MHZ)
    assert run(pid, wide, centres(5726 * MHZ, 1.5 * MHZ, 75))["bandwidth"].status == "fail"
    assert run(pid, make_system(tx_power_dbm=30.5, bandwidth_hz=1 * MHZ),
               centres(5726 * MHZ, 1.5 * MHZ, 75))["power"].status == "fail"
    warn = make_system(bandwidth_hz=1 * MHZ, dwell_s=0.3, packet_airtime_s=0.3)  # period 22.5 s, 2 visits in 30 s
    assert run(pid, warn, centres(5726 * MHZ, 1.5 * MHZ, 75))["occupancy"].status == "warning"
    over = make_system(bandwidth_hz=1 * MHZ, dwell_s=0.4, packet_airtime_s=0.4)  # 60 channels: 0.5 s in 30 s
    assert run(pid, over, centres(5726 * MHZ, 1.5 * MHZ, 60))["occupancy"].status == "fail"


# RSS-247 (from memory): rss247-902-928 e.i.r.p. 4 W (36.021 dBm) with >= 50 channels, 1 W (30 dBm) with 25-49.
FOUR_W_DBM = 10 * math.log10(4000)


@pytest.mark.parametrize("n, tx, gain, expected, limit", [
    (50, 30.0, 6.0, "pass", FOUR_W_DBM), (50, 30.0, 6.5, "fail", FOUR_W_DBM), (50, 27.0, 9.0, "pass", FOUR_W_DBM),
    (50, 30.0, 6.03, "fail", FOUR_W_DBM),  # 36.03 dBm is 4.009 W: above 4 W though it rounds to 36.0
    (49, 24.0, 6.0, "pass", 30.0), (49, 24.0, 7.0, "fail", 30.0), (25, 24.0, 6.0, "pass", 30.0),
    (24, 20.0, 0.0, "fail", None),
])
def test_rss247_902_928_eirp_caps(n, tx, gain, expected, limit):
    s = make_system(bandwidth_hz=300 * KHZ, tx_power_dbm=tx, antenna_gain_dbi=gain)
    f = run("rss247-902-928", s, centres(902.5 * MHZ, 300 * KHZ, n))["eirp"]
    assert f.status == expected
    assert f.limit == (None if limit is None else pytest.approx(limit, abs=1e-12))


# The US profile has no separate e.i.r.p. rule (15.247(b)(4) is folded into the power rule).
def test_fcc_902_928_has_no_eirp_rule():
    assert "eirp" not in run("fcc15.247-902-928", make_system(), centres(902.5 * MHZ, 200 * KHZ, 50))


# Band fit (common practice): centre +/- half the 20 dB bandwidth inside 902-928 MHz.
def test_915_band_fit_edges():
    s = make_system(bandwidth_hz=200 * KHZ)
    assert run("fcc15.247-902-928", s, centres(902.1 * MHZ, 200 * KHZ, 130))["band-fit"].status == "pass"  # 902.0-928.0
    assert run("fcc15.247-902-928", s, centres(902.1 * MHZ, 200 * KHZ, 131))["band-fit"].status == "fail"
    assert run("fcc15.247-902-928", s, centres(902.099 * MHZ, 200 * KHZ, 50))["band-fit"].status == "fail"


# check_compliance sorts the hop set: order of the input does not change any finding.
def test_input_order_does_not_matter():
    kw, first, spacing, n = COMPLIANT["rss247-902-928"]
    c = centres(first, spacing, n)
    fwd, rev = run("rss247-902-928", make_system(**kw), c), run("rss247-902-928", make_system(**kw), c[::-1])
    assert {k: (f.status, f.measured) for k, f in fwd.items()} == {k: (f.status, f.measured) for k, f in rev.items()}
