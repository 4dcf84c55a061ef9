"""Regulatory profiles: band edges and the rules a hop set is checked against.

Each rule carries its citation and how sure we are of it (the rule's
own text where it was seen: 47 CFR 15.247, RSS-247, ETSI EN 300 328,
CEPT ERC Rec 70-03). These are planning aids: the operator is responsible
for compliance, and local rules and the regulator's current text prevail.

Profile ids name the rule family and the band edges in MHz
(`fcc15.247-902-928`); `FORMER_IDS` maps the ids of earlier releases to
them, so that a request with a former id is refused with the new one.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

from cohop.regulatory import checks, power
from cohop.regulatory.power import GainReduction, PowerLimit
from cohop.regulatory.rules import (COMMON_PRACTICE, FAIL, FROM_MEMORY, PARTLY_SEEN, PASS, PUBLISHED, SEEN_QUOTED,
                                    Finding, HopContext, Rule, RuleCheck)
from cohop.site import Band

MHZ = 1e6
KHZ = 1e3


@dataclass(frozen=True)
class Profile:
    id: str
    name: str
    region: str  # "US", "CA", "EU" or "custom"
    band: Band | None  # None: the request gives the band (custom profile)
    checks: tuple[RuleCheck, ...]
    coordination_caution: bool = False

    @property
    def rules(self) -> tuple[Rule, ...]:
        return tuple(c.rule for c in self.checks)


def _band_fit(pid: str) -> RuleCheck:
    return checks.band_fit(Rule(f"{pid}.band-fit", "Occupied bandwidth inside the band",
                                "grid fit (common practice)", COMMON_PRACTICE,
                                "each hop channel's centre +/- half its 20 dB bandwidth lies inside the band edges"))


# --- United States, 47 CFR 15.247 -------------------------------------------

def _as_us(region: str, citation: str, certainty: str) -> tuple[str, str]:
    """Canadian rules are taken as the US ones, from memory (RSS-247 not checked)."""
    if region == "CA":
        return f"RSS-247 (as {citation})", FROM_MEMORY
    return citation, certainty


def _us_sequence(pid: str, region: str) -> RuleCheck:
    cite, cert = _as_us(region, "47 CFR 15.247(a)(1); 47 CFR 2.1", PUBLISHED)
    return checks.sequence_order(Rule(
        f"{pid}.sequence", "Pseudo-random order, equal average use", cite, cert,
        "channels used in a pseudo-randomly ordered list, each equally on average"))


def _us_separation(pid: str, region: str, two_thirds_up_to: PowerLimit | None = None) -> RuleCheck:
    """max(25 kHz, 20 dB bandwidth); at 2.4 GHz and an output of at most 125 mW, max(25 kHz, 2/3 BW)."""

    def required(ctx: HopContext) -> float:
        bw = ctx.system.bandwidth_hz
        if two_thirds_up_to is not None and power.within(ctx.system.tx_power_dbm, two_thirds_up_to.dbm):
            bw = bw * 2 / 3
        return max(25 * KHZ, bw)

    summary = "hop channels separated by at least max(25 kHz, 20 dB bandwidth)"
    if two_thirds_up_to is not None:
        summary += "; max(25 kHz, 2/3 of the 20 dB bandwidth) at an output of 125 mW or less"
    cite, cert = _as_us(region, "47 CFR 15.247(a)(1)", PUBLISHED)
    return checks.min_separation(Rule(f"{pid}.separation", "Channel separation", cite, cert, summary), required)


def _us915_min_channels(ctx: HopContext) -> int | None:
    bw = ctx.system.bandwidth_hz
    if bw < 250 * KHZ:
        return 50
    if bw <= 500 * KHZ:
        return 25
    return None


def _us915_window_s(ctx: HopContext) -> float:
    return 20.0 if ctx.system.bandwidth_hz < 250 * KHZ else 10.0


def _us915_power(ctx: HopContext) -> PowerLimit | None:
    if ctx.count >= 50:
        return power.US_915_50  # 1 W
    if ctx.count >= 25:
        return power.US_915_25  # 0.25 W
    return None


# --- antenna gain and fixed point-to-point (47 CFR 15.247(b)(4), (c)(1)) ----------------------------------

PTP_TITLE = "Fixed point-to-point antenna gain"
PTP_SUMMARY = ("systems used exclusively for fixed point-to-point operation: 2400-2483.5 MHz may use antennas above "
               "6 dBi with 1 dB less conducted power per 3 dB of gain above 6 dBi; 5725-5850 MHz with no reduction; "
               "no relaxation in 902-928 MHz (seen quoted; check the regulator's current text)")
#: Why a declared fixed point-to-point system gets no relaxation, per profile family.
PTP_NO_EFFECT = {
    "US-902": "47 CFR 15.247(c)(1) relaxes the antenna-gain rule only in 2400-2483.5 and 5725-5850 MHz, so "
              "above 6 dBi the conducted limit still falls dB for dB (15.247(b)(4))",
    "CA": "RSS-247's point-to-point provisions were not checked and are not encoded, so the US relaxation of "
          "47 CFR 15.247(c)(1) is not assumed: the limits apply as to any system",
    "EN300328": "the e.i.r.p. limit of EN 300 328 includes the antenna gain and no point-to-point relaxation is "
               "encoded: it applies as to any system",
    "ERC7003": "the e.r.p. limits of ERC Rec 70-03 include the antenna gain and no point-to-point relaxation is "
              "encoded: they apply as to any system",
}
PTP_OPERATOR = ("exclusive fixed point-to-point use (no point-to-multipoint, omnidirectional or co-located "
                "transmitters sending the same information; 15.247(c)(1)(iii), from memory) is the operator's "
                "declaration and cannot be checked here")


def _gain_reduction(relaxed: Callable[[float], GainReduction] | None):
    """The antenna-gain reduction of a conducted limit: dB for dB (15.247(b)(4)), or `relaxed` for a system
    declared fixed point-to-point where 15.247(c)(1) applies; elsewhere the declaration changes nothing."""

    def reduction(ctx: HopContext) -> GainReduction:
        gain = ctx.system.antenna_gain_dbi
        if not ctx.system.fixed_point_to_point:
            return power.db_for_db(gain)
        if relaxed is not None:
            return relaxed(gain)
        plain = power.db_for_db(gain)
        note = "fixed point-to-point declared, no relaxation here"
        return GainReduction(plain.db, f"{plain.note}; {note}" if plain.note else note)

    return reduction


def _ptp_effect(relaxed: Callable[[float], GainReduction] | None, no_effect: str):
    def effect(ctx: HopContext) -> tuple[bool, str]:
        if relaxed is None:
            return False, f"declared fixed point-to-point, which changes nothing here: {no_effect}"
        gain = ctx.system.antenna_gain_dbi
        cut, plain = relaxed(gain).db, power.db_for_db(gain).db
        return True, (f"not checked: {PTP_OPERATOR}. On that declaration the conducted limit is lowered "
                      f"{cut:.3f} dB for the {gain:.3f} dBi antenna, instead of {plain:.3f} dB "
                      "(dB for dB, 15.247(b)(4))")

    return effect


def _ptp_rule(pid: str, citation: str, certainty: str, relaxed: Callable[[float], GainReduction] | None,
              no_effect: str, summary: str = "") -> RuleCheck:
    """The finding of a fixed point-to-point declaration (none for other systems); `summary` defaults to
    saying the declaration changes nothing here, and why."""
    summary = summary or f"a fixed point-to-point declaration changes nothing here: {no_effect}"
    return checks.point_to_point(Rule(f"{pid}.point-to-point", PTP_TITLE, citation, certainty, summary),
                                 _ptp_effect(relaxed, no_effect))


def _us_ptp(pid: str, region: str, relaxed: Callable[[float], GainReduction] | None) -> RuleCheck:
    if region == "CA":
        return _ptp_rule(pid, "RSS-247 (point-to-point provisions not encoded)", FROM_MEMORY, None,
                         PTP_NO_EFFECT["CA"])
    paragraph = {power.point_to_point_2400: "(c)(1)(i), (iii)", power.point_to_point_5800: "(c)(1)(ii), (iii)",
                 None: "(c)(1)"}[relaxed]
    return _ptp_rule(pid, f"47 CFR 15.247{paragraph}", SEEN_QUOTED, relaxed, PTP_NO_EFFECT["US-902"], PTP_SUMMARY)


def _us_gain(region: str, relaxed: Callable[[float], GainReduction] | None):
    """Canada: the US relaxation is not assumed (RSS-247's own provisions not checked)."""
    return _gain_reduction(None if region == "CA" else relaxed)


def _us_915(pid: str, region: str, certainty_note: str = "") -> list[RuleCheck]:
    """US rules; for Canada the same numbers, marked from memory (RSS-247 not checked)."""

    def c(cert: str) -> str:
        return FROM_MEMORY if region == "CA" else cert

    def cite(us: str, ca: str) -> str:
        return ca if region == "CA" else us
    return [
        _band_fit(pid),
        checks.channel_count(Rule(f"{pid}.channels", "Minimum number of hopping channels",
                                  cite("47 CFR 15.247(a)(1)(i)", "RSS-247 (as 47 CFR 15.247(a)(1)(i))"),
                                  c(PUBLISHED),
                                  "at least 50 channels below 250 kHz 20 dB bandwidth; at least 25 from 250 to 500 kHz"
                                  + certainty_note), _us915_min_channels),
        checks.max_bandwidth(Rule(f"{pid}.bandwidth", "Maximum 20 dB bandwidth",
                                  cite("47 CFR 15.247(a)(1)(i)", "RSS-247 (as 47 CFR 15.247(a)(1)(i))"),
                                  c(PUBLISHED), "20 dB bandwidth at most 500 kHz" + certainty_note), 500 * KHZ),
        _us_separation(pid, region),
        checks.occupancy(Rule(f"{pid}.occupancy", "Average time of occupancy",
                              cite("47 CFR 15.247(a)(1)(i)", "RSS-247 (as 47 CFR 15.247(a)(1)(i))"),
                              c(PUBLISHED),
                              "at most 0.4 s on any channel within 20 s (below 250 kHz) or 10 s (250-500 kHz)"
                              + certainty_note), 0.4, _us915_window_s),
        checks.conducted_power(Rule(f"{pid}.power", "Peak conducted output power",
                                    cite("47 CFR 15.247(b)(2), (b)(4)", "RSS-247 (as 47 CFR 15.247(b)(2))"),
                                    c(SEEN_QUOTED),
                                    "1 W with at least 50 channels, 0.25 W with 25-49; above 6 dBi antenna gain "
                                    "the limit falls dB for dB" + certainty_note), _us915_power,
                               _us_gain(region, None)),
        _us_sequence(pid, region),
        _us_ptp(pid, region, None),
    ]


def _us2400_power(ctx: HopContext) -> PowerLimit:
    sep = ctx.separation_hz
    non_overlapping = sep is None or sep >= ctx.system.bandwidth_hz * (1 - 1e-9)
    return power.US_2400_75 if (ctx.count >= 75 and non_overlapping) else power.US_2400_OTHER  # 1 W / 0.125 W


def _us_2400(pid: str, region: str) -> list[RuleCheck]:
    cert = FROM_MEMORY if region == "CA" else PUBLISHED
    suffix = " (assumed as in the US; from memory, check RSS-247)" if region == "CA" else ""
    cite = "RSS-247 (as 47 CFR 15.247)" if region == "CA" else "47 CFR 15.247"
    return [
        _band_fit(pid),
        checks.channel_count(Rule(f"{pid}.channels", "Minimum number of hopping channels",
                                  f"{cite}(a)(1)(iii)", cert, "at least 15 channels" + suffix), lambda ctx: 15),
        _us_separation(pid, region, two_thirds_up_to=power.US_2400_TWO_THIRDS),
        checks.occupancy(Rule(f"{pid}.occupancy", "Average time of occupancy", f"{cite}(a)(1)(iii)", cert,
                              "at most 0.4 s on any channel within 0.4 s x number of channels used" + suffix),
                         0.4, lambda ctx: 0.4 * ctx.count),
        checks.conducted_power(Rule(f"{pid}.power", "Peak conducted output power",
                                    f"{cite}(b)(1), (b)(4)" + ("" if region == "CA" else ", (c)(1)(i)"),
                                    FROM_MEMORY,
                                    "1 W with at least 75 non-overlapping channels, else 0.125 W; above 6 dBi "
                                    "antenna gain the limit falls dB for dB, or 1 dB per 3 dB for fixed "
                                    "point-to-point systems" + (suffix or " (seen quoted; check)")),
                               _us2400_power, _us_gain(region, power.point_to_point_2400)),
        _us_sequence(pid, region),
        _us_ptp(pid, region, power.point_to_point_2400),
    ]


def _us_5800(pid: str, region: str) -> list[RuleCheck]:
    suffix = " (assumed as in the US; from memory, check RSS-247)" if region == "CA" else ""
    cite = "RSS-247 (as 47 CFR 15.247)" if region == "CA" else "47 CFR 15.247"
    return [
        _band_fit(pid),
        checks.channel_count(Rule(f"{pid}.channels", "Minimum number of hopping channels", f"{cite}(a)(1)(ii)",
                                  FROM_MEMORY, "at least 75 channels" + suffix), lambda ctx: 75),
        checks.max_bandwidth(Rule(f"{pid}.bandwidth", "Maximum 20 dB bandwidth", f"{cite}(a)(1)(ii)",
                                  FROM_MEMORY, "20 dB bandwidth at most 1 MHz" + suffix), 1 * MHZ),
        _us_separation(pid, region),
        checks.occupancy(Rule(f"{pid}.occupancy", "Average time of occupancy", f"{cite}(a)(1)(ii)", FROM_MEMORY,
                              "at most 0.4 s on any channel within 30 s" + suffix), 0.4, lambda ctx: 30.0),
        checks.conducted_power(Rule(f"{pid}.power", "Peak conducted output power",
                                    f"{cite}(b)(1), (b)(4)" + ("" if region == "CA" else ", (c)(1)(ii)"),
                                    FROM_MEMORY, "1 W; above 6 dBi antenna gain the limit falls dB for dB, except "
                                    "for fixed point-to-point systems" + (suffix or " (seen quoted; check)")),
                               lambda ctx: power.US_5800, _us_gain(region, power.point_to_point_5800)),
        _us_sequence(pid, region),
        _us_ptp(pid, region, power.point_to_point_5800),
    ]


def _ca915_eirp(ctx: HopContext) -> PowerLimit | None:
    if ctx.count >= 50:
        return power.CA_915_EIRP_50  # 4 W
    if ctx.count >= 25:
        return power.CA_915_EIRP_25  # 1 W
    return None


# --- European Union, ETSI EN 300 328 and CEPT ERC Rec 70-03 -------------------

def _en300328(pid: str, adaptive: bool) -> list[RuleCheck]:
    floor_count = 15 if adaptive else 5
    cite = "ETSI EN 300 328 V2.2.2"

    def min_channels(ctx: HopContext) -> int:
        sep = ctx.separation_hz
        by_span = math.ceil(15 * MHZ / sep * (1 - 1e-9)) if sep else floor_count
        return max(floor_count, by_span)

    if adaptive:
        dwell_rule = checks.occupancy(Rule(
            f"{pid}.occupancy", "Accumulated transmit time", f"{cite} (adaptive FHSS)", PARTLY_SEEN,
            "at most 400 ms on any hopping frequency within 400 ms x number of frequencies"),
            0.4, lambda ctx: 0.4 * ctx.count)
    else:
        dwell_rule = checks.occupancy(Rule(
            f"{pid}.occupancy", "Accumulated transmit time", f"{cite} (non-adaptive FHSS)", PARTLY_SEEN,
            "at most 15 ms on any hopping frequency within 15 ms x number of frequencies"),
            0.015, lambda ctx: 0.015 * ctx.count)
    out = [
        _band_fit(pid),
        checks.channel_count(Rule(
            f"{pid}.channels", "Minimum number of hopping frequencies", cite, PARTLY_SEEN,
            f"at least max({floor_count}, 15 MHz / hop separation) frequencies"
            + ("; at least 15 kept when avoiding channels" if adaptive else "")), min_channels),
        checks.min_separation(Rule(
            f"{pid}.separation", "Hop separation", cite, PARTLY_SEEN,
            "hop separation at least the occupied bandwidth and at least 100 kHz"),
            lambda ctx: max(100 * KHZ, ctx.system.bandwidth_hz)),
        dwell_rule,
        checks.eirp(Rule(f"{pid}.eirp", "Maximum e.i.r.p.", cite, PARTLY_SEEN, "at most 20 dBm (100 mW) e.i.r.p."),
                    lambda ctx: power.EU_2400_EIRP),
        _ptp_rule(pid, cite, PARTLY_SEEN, None, PTP_NO_EFFECT["EN300328"]),
    ]
    if not adaptive:
        out.append(checks.medium_utilisation(Rule(
            f"{pid}.medium-utilisation", "Medium utilisation", cite, FROM_MEMORY,
            "duty cycle x (e.i.r.p. / 100 mW) at most 10 %"), 0.10))
    return out


@dataclass(frozen=True)
class SubBand:
    low_hz: float
    high_hz: float
    max_erp_w: float  # e.r.p. limit in watts, as Rec 70-03 states it
    max_duty_fraction: float | None  # None: no duty-cycle limit
    certainty: str
    name: str

    @property
    def max_erp_dbm(self) -> float:
        """The e.r.p. limit in dBm, computed exactly from its watts (25 mW = 13.979 dBm)."""
        return power.dbm_of_watts(self.max_erp_w)


# CEPT ERC Rec 70-03 Annex 1 (non-specific short-range devices). ERP = EIRP - 2.15 dB.
EU868_SUBBANDS = (
    SubBand(863.0 * MHZ, 870.0 * MHZ, 0.025, 0.001, FROM_MEMORY, "863-870 MHz"),
    SubBand(868.0 * MHZ, 868.6 * MHZ, 0.025, 0.01, PARTLY_SEEN, "868.0-868.6 MHz"),
    SubBand(868.7 * MHZ, 869.2 * MHZ, 0.025, 0.001, FROM_MEMORY, "868.7-869.2 MHz"),
    SubBand(869.4 * MHZ, 869.65 * MHZ, 0.5, 0.10, PARTLY_SEEN, "869.4-869.65 MHz"),
    SubBand(869.7 * MHZ, 870.0 * MHZ, 0.005, None, FROM_MEMORY, "869.7-870.0 MHz"),
)
#: e.r.p. = e.i.r.p. - 2.15 dB: the gain of a half-wave dipole over an isotropic antenna (ERC Rec 70-03).
DIPOLE_GAIN_DBI = 2.15


def _erp_dbm(ctx: HopContext) -> float:
    return ctx.system.eirp_dbm - DIPOLE_GAIN_DBI


def _meets(band: SubBand, ctx: HopContext) -> bool:
    duty_ok = band.max_duty_fraction is None or ctx.duty_fraction <= band.max_duty_fraction + 1e-12
    return duty_ok and power.within(_erp_dbm(ctx), band.max_erp_dbm)


def eu868_subband(ctx: HopContext) -> SubBand | None:
    """The sub-band the hop set is judged in: one holding its whole occupied
    spectrum whose limits the system meets, if any; else the most permissive
    one holding it (whose limit it then fails); None if none holds it."""
    half = ctx.system.bandwidth_hz / 2
    low, high = ctx.centres_hz[0] - half, ctx.centres_hz[-1] + half
    fits = [b for b in EU868_SUBBANDS if b.low_hz - 1e-6 <= low and high <= b.high_hz + 1e-6]
    if not fits:
        return None
    met = [b for b in fits if _meets(b, ctx)]
    return max(met or fits, key=lambda b: (b.max_duty_fraction if b.max_duty_fraction is not None else 1.0,
                                           b.max_erp_dbm))


def _eu868_power(rule: Rule) -> RuleCheck:
    def check(ctx: HopContext) -> Finding:
        band = eu868_subband(ctx)
        erp = _erp_dbm(ctx)
        if band is None:
            return Finding(rule, FAIL, "hop set does not fit one sub-band encoded here", measured=erp, unit="dBm")
        ok = power.within(erp, band.max_erp_dbm)
        return Finding(rule, PASS if ok else FAIL,
                       power.comparison(erp, band.max_erp_dbm, "e.r.p.", f"{band.max_erp_w:g} W in {band.name}, "
                                        f"{band.certainty}") + f"; e.r.p. is the e.i.r.p. less {DIPOLE_GAIN_DBI} dB",
                       measured=erp, limit=band.max_erp_dbm, unit="dBm")

    return RuleCheck(rule, check)


def _eu868_duty(rule: Rule) -> RuleCheck:
    def check(ctx: HopContext) -> Finding:
        band = eu868_subband(ctx)
        duty = ctx.duty_fraction
        if band is None:
            return Finding(rule, FAIL, "hop set does not fit one sub-band encoded here", measured=duty,
                           unit="fraction")
        if band.max_duty_fraction is None:
            return Finding(rule, PASS, f"no duty-cycle limit in {band.name} ({band.certainty})",
                           measured=duty, unit="fraction")
        ok = duty <= band.max_duty_fraction + 1e-12
        return Finding(rule, PASS if ok else FAIL,
                       f"duty cycle {duty * 100:.3f} % over the whole transmission in {band.name} "
                       f"({band.certainty}), at most {band.max_duty_fraction * 100:g} %",
                       measured=duty, limit=band.max_duty_fraction, unit="fraction")

    return RuleCheck(rule, check)


def _eu868(pid: str) -> list[RuleCheck]:
    cite = "CEPT ERC Rec 70-03 Annex 1"
    return [
        _band_fit(pid),
        _eu868_power(Rule(f"{pid}.erp", "Sub-band e.r.p.", cite, PARTLY_SEEN,
                          "e.r.p. within the sub-band limit (e.g. 868.0-868.6 MHz 25 mW; 869.4-869.65 MHz 500 mW)")),
        _eu868_duty(Rule(f"{pid}.duty-cycle", "Sub-band duty cycle", cite, PARTLY_SEEN,
                         "a frequency-agile device's duty cycle counts over its whole transmission "
                         "(e.g. 868.0-868.6 MHz 1 %; 869.4-869.65 MHz 10 %)")),
        checks.not_encoded(Rule(f"{pid}.fhss", "FHSS limits of EN 300 220-2", "ETSI EN 300 220-2 4.3.10",
                                FROM_MEMORY, "the FHSS limits of EN 300 220-2 (4.3.10) were not checked against "
                                "the standard and are deliberately not encoded; check them yourself")),
        _ptp_rule(pid, cite, PARTLY_SEEN, None, PTP_NO_EFFECT["ERC7003"]),
    ]


def _build() -> dict[str, Profile]:
    us = "47 CFR 15.247"
    ca_note = " (as in the US; from memory, check RSS-247)"
    profiles = [
        Profile("fcc15.247-902-928", f"US 902-928 MHz FHSS ({us})", "US", Band(902 * MHZ, 928 * MHZ),
                tuple(_us_915("fcc15.247-902-928", "US")), coordination_caution=True),
        Profile("fcc15.247-2400-2483.5", f"US 2400-2483.5 MHz FHSS ({us})", "US",
                Band(2400 * MHZ, 2483.5 * MHZ), tuple(_us_2400("fcc15.247-2400-2483.5", "US")),
                coordination_caution=True),
        Profile("fcc15.247-5725-5850", f"US 5725-5850 MHz FHSS ({us})", "US", Band(5725 * MHZ, 5850 * MHZ),
                tuple(_us_5800("fcc15.247-5725-5850", "US")), coordination_caution=True),
        Profile("rss247-902-928", "Canada 902-928 MHz FHSS (RSS-247)", "CA", Band(902 * MHZ, 928 * MHZ),
                tuple(_us_915("rss247-902-928", "CA", ca_note) + [checks.eirp(Rule(
                    "rss247-902-928.eirp", "Maximum e.i.r.p.", "RSS-247", FROM_MEMORY,
                    "4 W e.i.r.p. with at least 50 channels, 1 W with 25-49"), _ca915_eirp)]),
                coordination_caution=True),
        Profile("rss247-2400-2483.5", "Canada 2400-2483.5 MHz FHSS (RSS-247)", "CA", Band(2400 * MHZ, 2483.5 * MHZ),
                tuple(_us_2400("rss247-2400-2483.5", "CA")), coordination_caution=True),
        Profile("rss247-5725-5850", "Canada 5725-5850 MHz FHSS (RSS-247)", "CA", Band(5725 * MHZ, 5850 * MHZ),
                tuple(_us_5800("rss247-5725-5850", "CA")), coordination_caution=True),
        Profile("en300328-2400-2483.5-adaptive", "EU 2400-2483.5 MHz adaptive FHSS (EN 300 328)", "EU",
                Band(2400 * MHZ, 2483.5 * MHZ), tuple(_en300328("en300328-2400-2483.5-adaptive", adaptive=True))),
        Profile("en300328-2400-2483.5-nonadaptive", "EU 2400-2483.5 MHz non-adaptive FHSS (EN 300 328)", "EU",
                Band(2400 * MHZ, 2483.5 * MHZ), tuple(_en300328("en300328-2400-2483.5-nonadaptive", adaptive=False))),
        Profile("erc7003-863-870", "EU 863-870 MHz short-range devices (ERC Rec 70-03)", "EU",
                Band(863 * MHZ, 870 * MHZ), tuple(_eu868("erc7003-863-870"))),
        Profile("custom", "Custom band, no regulatory limits", "custom", None, (_band_fit("custom"),)),
    ]
    return {p.id: p for p in profiles}


PROFILES: dict[str, Profile] = _build()


def get_profile(profile_id: str) -> Profile:
    return PROFILES[profile_id]


#: Former profile ids (region plus MHz) and the ids that replaced them (rule family plus band
#: edges). Only used to say what an old id became: requests must use the new ids.
FORMER_IDS: dict[str, str] = {
    "us-915": "fcc15.247-902-928",
    "us-2400": "fcc15.247-2400-2483.5",
    "us-5800": "fcc15.247-5725-5850",
    "ca-915": "rss247-902-928",
    "ca-2400": "rss247-2400-2483.5",
    "ca-5800": "rss247-5725-5850",
    "eu-2400-adaptive": "en300328-2400-2483.5-adaptive",
    "eu-2400-nonadaptive": "en300328-2400-2483.5-nonadaptive",
    "eu-868": "erc7003-863-870",
}


def unknown_profile_message(profile_id: str) -> str:
    """Why `profile_id` is refused: the new id when it is a former one, else the known ids."""
    if profile_id in FORMER_IDS:
        return (f"Profile ids were renamed: {profile_id!r} is now {FORMER_IDS[profile_id]!r} "
                "(`cohop profiles` lists them).")
    return f"Unknown profile {profile_id!r}; one of: {', '.join(sorted(PROFILES))}."
