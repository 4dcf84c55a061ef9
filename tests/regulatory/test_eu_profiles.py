"""EU profiles: ETSI EN 300 328 (2.4 GHz FHSS) and CEPT ERC Rec 70-03 Annex 1 (863-870 MHz).

Sources are the project's rule table; each test names the clause it checks.
"""

from __future__ import annotations

import math

import pytest

from cohop.site import System
from tests.regulatory.findings import centres, run, statuses

KHZ, MHZ = 1e3, 1e6
EU24 = ["en300328-2400-2483.5-adaptive", "en300328-2400-2483.5-nonadaptive"]


def make_system(**kw) -> System:
    base = dict(id="s1", tx_power_dbm=20.0, antenna_gain_dbi=0.0, bandwidth_hz=1 * MHZ, dwell_s=0.005,
                packet_airtime_s=0.005, activity_fraction=0.1, required_sir_db=10.0, rejection=(), retry_limit=0)
    base.update(kw)
    return System(**base)


def erp_system(erp_dbm: float, duty: float, bw_hz: float = 25 * KHZ) -> System:
    """e.i.r.p. = e.r.p. + 2.15 dB (ERC Rec 70-03); duty = activity x airtime / dwell with airtime = dwell."""
    return make_system(tx_power_dbm=erp_dbm + 2.15, antenna_gain_dbi=0.0, bandwidth_hz=bw_hz,
                       dwell_s=0.1, packet_airtime_s=0.1, activity_fraction=duty)


MW500, MW25 = 10 * math.log10(500), 10 * math.log10(25)
# 869.4-869.65 MHz, 25 kHz channels: occupied spectrum 869.400-869.650 MHz exactly.
G_869_4 = centres(869.4125 * MHZ, 25 * KHZ, 10)
# 868.0-868.6 MHz, 100 kHz channels: occupied spectrum 868.0-868.6 MHz exactly.
G_868_0 = centres(868.05 * MHZ, 100 * KHZ, 6)


# ETSI EN 300 328 V2.2.2 [partly seen]: 15 frequencies at 1 MHz, 20 dBm e.i.r.p.; adaptive 400 ms x N,
# non-adaptive 15 ms x N and medium utilisation 10 % (from memory).
@pytest.mark.parametrize("pid", EU24)
def test_compliant_2400_hop_set_passes_every_rule(pid):
    s = make_system(tx_power_dbm=17.0, antenna_gain_dbi=3.0)
    f = run(pid, s, centres(2402 * MHZ, 1 * MHZ, 15))
    assert all(v == "pass" for v in statuses(f).values()), statuses(f)


# CEPT ERC Rec 70-03 Annex 1 [partly seen]; EN 300 220-2 FHSS limits deliberately not encoded (warning).
def test_compliant_868_hop_set_passes_all_but_en300220_note():
    f = run("erc7003-863-870", erp_system(MW500, 0.10), G_869_4)
    note = f.pop("fhss")
    assert note.status == "warning" and "not checked" in note.message and "300 220" in note.message
    assert all(v == "pass" for v in statuses(f).values()), statuses(f)


# EN 300 328 V2.2.2 [partly seen]: at least max(5 | 15, 15 MHz / hop separation) frequencies.
@pytest.mark.parametrize("pid, spacing, need", [
    ("en300328-2400-2483.5-nonadaptive", 1 * MHZ, 15), ("en300328-2400-2483.5-adaptive", 1 * MHZ, 15),
    ("en300328-2400-2483.5-nonadaptive", 3 * MHZ, 5), ("en300328-2400-2483.5-adaptive", 3 * MHZ, 15),
    ("en300328-2400-2483.5-nonadaptive", 4 * MHZ, 5), ("en300328-2400-2483.5-nonadaptive", 2 * MHZ, 8),
    ("en300328-2400-2483.5-nonadaptive", 0.5 * MHZ, 30), ("en300328-2400-2483.5-adaptive", 0.5 * MHZ, 30),
])
def test_minimum_frequency_count(pid, spacing, need):
    s = make_system(bandwidth_hz=min(1 * MHZ, spacing))
    ok = run(pid, s, centres(2401 * MHZ, spacing, need))["channels"]
    assert ok.status == "pass" and ok.limit == need
    assert run(pid, s, centres(2401 * MHZ, spacing, need - 1))["channels"].status == "fail"


# EN 300 328 V2.2.2 [partly seen]: hop separation >= occupied bandwidth and >= 100 kHz.
@pytest.mark.parametrize("pid", EU24)
def test_hop_separation(pid):
    s = make_system(bandwidth_hz=1 * MHZ)
    assert run(pid, s, centres(2402 * MHZ, 1 * MHZ, 15))["separation"].status == "pass"
    assert run(pid, s, centres(2402 * MHZ, 1 * MHZ - 1, 15))["separation"].status == "fail"
    narrow = make_system(bandwidth_hz=50 * KHZ)
    assert run(pid, narrow, centres(2402 * MHZ, 100 * KHZ, 150))["separation"].status == "pass"
    f = run(pid, narrow, centres(2402 * MHZ, 99.999 * KHZ, 150))["separation"]
    assert f.status == "fail" and f.limit == pytest.approx(100 * KHZ)


# EN 300 328 V2.2.2 [partly seen]: 20 dBm e.i.r.p. (antenna gain included).
@pytest.mark.parametrize("pid", EU24)
@pytest.mark.parametrize("tx, gain, expected", [(20.0, 0.0, "pass"), (17.0, 3.0, "pass"),
                                                (18.0, 3.0, "fail"), (20.1, 0.0, "fail")])
def test_eirp_20dbm(pid, tx, gain, expected):
    s = make_system(tx_power_dbm=tx, antenna_gain_dbi=gain, activity_fraction=0.05)
    f = run(pid, s, centres(2402 * MHZ, 1 * MHZ, 15))["eirp"]
    assert f.status == expected and f.limit == pytest.approx(20.0)


# EN 300 328 V2.2.2 non-adaptive [partly seen]: accumulated transmit time <= 15 ms within 15 ms x N.
@pytest.mark.parametrize("dwell, airtime, expected", [
    (0.015, 0.015, "pass"),     # one visit per 15 ms x N window
    (0.005, 0.005, "pass"),     # three visits of 5 ms
    (0.015, 0.016, "fail"),     # 16 ms average
    (0.010, 0.010, "warning"),  # average 15 ms but a window can see 2 visits = 20 ms
])
def test_nonadaptive_accumulated_transmit_time(dwell, airtime, expected):
    s = make_system(dwell_s=dwell, packet_airtime_s=airtime, activity_fraction=0.05)
    f = run("en300328-2400-2483.5-nonadaptive", s, centres(2402 * MHZ, 1 * MHZ, 15))["occupancy"]
    assert f.status == expected, f.message
    assert f.limit == pytest.approx(0.015)


# EN 300 328 V2.2.2 adaptive [partly seen]: <= 400 ms within 400 ms x N.
@pytest.mark.parametrize("dwell, airtime, expected", [(0.4, 0.4, "pass"), (0.4, 0.45, "fail"),
                                                      (0.3, 0.3, "warning"), (0.1, 0.1, "pass")])
def test_adaptive_accumulated_transmit_time(dwell, airtime, expected):
    s = make_system(dwell_s=dwell, packet_airtime_s=airtime, activity_fraction=0.5)
    f = run("en300328-2400-2483.5-adaptive", s, centres(2402 * MHZ, 1 * MHZ, 15))["occupancy"]
    assert f.status == expected, f.message
    assert f.limit == pytest.approx(0.4)


# EN 300 328 V2.2.2 non-adaptive: medium utilisation = duty x (e.i.r.p. / 100 mW) <= 10 % (from memory).
@pytest.mark.parametrize("eirp_dbm, duty, expected", [
    (20.0, 0.10, "pass"),                      # exactly 10 %
    (20.0, 0.11, "fail"),
    (10 * math.log10(50), 0.20, "pass"),       # 50 mW at 20 %: 10 %
    (10 * math.log10(50), 0.21, "fail"),
    (10.0, 1.0, "pass"),                       # 10 mW continuous: 10 %
])
def test_medium_utilisation(eirp_dbm, duty, expected):
    s = make_system(tx_power_dbm=eirp_dbm, antenna_gain_dbi=0.0, activity_fraction=duty)
    f = run("en300328-2400-2483.5-nonadaptive", s, centres(2402 * MHZ, 1 * MHZ, 15))["medium-utilisation"]
    assert f.status == expected, f.message
    assert f.measured == pytest.approx(duty * 10 ** (eirp_dbm / 10) / 100)


# EN 300 328 V2.2.2: medium utilisation is a non-adaptive limit; the adaptive profile has none.
def test_adaptive_has_no_medium_utilisation_rule():
    s = make_system(activity_fraction=0.5)
    assert "medium-utilisation" not in run("en300328-2400-2483.5-adaptive", s, centres(2402 * MHZ, 1 * MHZ, 15))


# ERC Rec 70-03 Annex 1 [partly seen]: 869.4-869.65 MHz, 500 mW e.r.p., 10 % duty.
@pytest.mark.parametrize("erp, duty, power, duty_status", [
    (MW500, 0.10, "pass", "pass"), (MW500, 0.11, "pass", "fail"), (MW500 + 0.1, 0.10, "fail", "pass"),
])
def test_869_4_subband(erp, duty, power, duty_status):
    f = run("erc7003-863-870", erp_system(erp, duty), G_869_4)
    assert (f["erp"].status, f["duty-cycle"].status) == (power, duty_status)
    assert f["erp"].limit == pytest.approx(MW500) and f["duty-cycle"].limit == pytest.approx(0.10)
    assert "869.4-869.65" in f["erp"].message


# ERC Rec 70-03 Annex 1 [partly seen]: 868.0-868.6 MHz, 25 mW e.r.p., 1 % duty; a frequency-agile
# device's duty cycle counts over its whole transmission.
@pytest.mark.parametrize("erp, duty, power, duty_status", [
    (MW25, 0.01, "pass", "pass"), (MW25, 0.02, "pass", "fail"), (MW25 + 0.1, 0.01, "fail", "pass"),
])
def test_868_0_subband(erp, duty, power, duty_status):
    f = run("erc7003-863-870", erp_system(erp, duty, bw_hz=100 * KHZ), G_868_0)
    assert (f["erp"].status, f["duty-cycle"].status) == (power, duty_status)
    assert f["erp"].limit == pytest.approx(MW25) and f["duty-cycle"].limit == pytest.approx(0.01)
    assert f["band-fit"].status == "pass"


# ERC Rec 70-03 Annex 1 [partly seen]: the duty cycle counts over the whole transmission, so the same
# 1 % applies whether the set has 2 or 6 channels (not 1 % per channel).
def test_868_duty_is_not_per_channel():
    for n in (2, 6):
        f = run("erc7003-863-870", erp_system(MW25, 0.012, bw_hz=100 * KHZ), G_868_0[:n])
        assert f["duty-cycle"].status == "fail"
        assert f["duty-cycle"].measured == pytest.approx(0.012)


# ERC Rec 70-03 Annex 1: e.r.p. = e.i.r.p. - 2.15 dB [partly seen].
def test_erp_conversion():
    s = make_system(tx_power_dbm=MW25 + 2.15 - 3.0, antenna_gain_dbi=3.0, bandwidth_hz=100 * KHZ,
                    dwell_s=0.1, packet_airtime_s=0.1, activity_fraction=0.01)
    f = run("erc7003-863-870", s, G_868_0)["erp"]
    assert f.status == "pass"  # 16.13 dBm e.i.r.p. is 13.98 dBm (25 mW) e.r.p.
    assert f.measured == pytest.approx(s.eirp_dbm - 2.15)
    over = make_system(tx_power_dbm=MW25 + 2.2, antenna_gain_dbi=0.0, bandwidth_hz=100 * KHZ,
                       dwell_s=0.1, packet_airtime_s=0.1, activity_fraction=0.01)
    assert run("erc7003-863-870", over, G_868_0)["erp"].status == "fail"


# ERC Rec 70-03 Annex 1 (863-870 MHz band-wide entry: from memory): a set spanning 868.6-869.4 MHz fits
# no narrower sub-band, so the band-wide 25 mW / 0.1 % applies.
def test_set_spanning_sub_bands_falls_back_to_band_wide_entry():
    spread = centres(868.1 * MHZ, 200 * KHZ, 8)  # 868.0-869.6 MHz occupied
    f = run("erc7003-863-870", erp_system(MW25, 0.001, bw_hz=200 * KHZ), spread)
    assert (f["erp"].status, f["duty-cycle"].status) == ("pass", "pass")
    assert "863-870" in f["duty-cycle"].message
    assert run("erc7003-863-870", erp_system(MW25, 0.01, bw_hz=200 * KHZ), spread)["duty-cycle"].status == "fail"


# Band fit (common practice) and ERC Rec 70-03: a set reaching outside 863-870 MHz fits no sub-band.
def test_868_outside_band_fails():
    f = run("erc7003-863-870", erp_system(MW25, 0.001, bw_hz=200 * KHZ), centres(869.5 * MHZ, 200 * KHZ, 4))
    assert f["band-fit"].status == "fail"
    assert f["erp"].status == "fail" and "does not fit" in f["erp"].message
    assert f["duty-cycle"].status == "fail"


# ERC Rec 70-03 Annex 1 (869.7-870.0 MHz 5 mW no duty limit; 863-870 MHz 25 mW 0.1 %: both from memory):
# a set inside 869.7-870.0 MHz at 25 mW e.r.p. and 0.1 % duty meets the band-wide entry, so it complies;
# the checks pick 869.7-870.0 (by duty first) and fail it on its 5 mW limit.
def test_subband_pick_uses_a_sub_band_the_system_meets():
    s = erp_system(MW25, 0.001, bw_hz=25 * KHZ)
    f = run("erc7003-863-870", s, centres(869.7125 * MHZ, 25 * KHZ, 8))  # 869.700-869.900 MHz occupied
    assert (f["erp"].status, f["duty-cycle"].status) == ("pass", "pass")


# ERC Rec 70-03 Annex 1 (869.7-870.0 MHz, 5 mW, no duty limit: from memory).
def test_869_7_subband_5mw_without_duty_limit():
    f = run("erc7003-863-870", erp_system(10 * math.log10(5), 1.0), centres(869.7125 * MHZ, 25 * KHZ, 8))
    assert (f["erp"].status, f["duty-cycle"].status) == ("pass", "pass")
