"""Regulatory profiles: band edges and the rules a hop set is checked against.

Each rule carries its citation and how sure we are of it (domain reference
section 6). These are planning aids: the operator is responsible for
compliance, and local rules and the regulator's current text prevail.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from cohop.regulatory import checks
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


LOW_POWER_DBM = 10 * math.log10(125)  # 0.125 W


def _us_separation(pid: str, region: str, two_thirds_below_dbm: float | None = None) -> RuleCheck:
    """max(25 kHz, 20 dB bandwidth); at 2.4 GHz and <= 125 mW, max(25 kHz, 2/3 BW)."""

    def required(ctx: HopContext) -> float:
        bw = ctx.system.bandwidth_hz
        if two_thirds_below_dbm is not None and ctx.system.tx_power_dbm <= two_thirds_below_dbm:
            bw = bw * 2 / 3
        return max(25 * KHZ, bw)

    summary = "hop channels separated by at least max(25 kHz, 20 dB bandwidth)"
    if two_thirds_below_dbm is not None:
        summary += "; max(25 kHz, 2/3 of the 20 dB bandwidth) at 125 mW or less"
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


def _us915_power_dbm(ctx: HopContext) -> float | None:
    if ctx.count >= 50:
        return 30.0
    if ctx.count >= 25:
        return 24.0  # 0.25 W
    return None


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
                                    "the limit falls dB for dB" + certainty_note), _us915_power_dbm),
        _us_sequence(pid, region),
    ]


def _us2400_power_dbm(ctx: HopContext) -> float:
    sep = ctx.separation_hz
    non_overlapping = sep is None or sep >= ctx.system.bandwidth_hz * (1 - 1e-9)
    return 30.0 if (ctx.count >= 75 and non_overlapping) else LOW_POWER_DBM  # 1 W / 0.125 W


def _us_2400(pid: str, region: str) -> list[RuleCheck]:
    cert = FROM_MEMORY if region == "CA" else PUBLISHED
    suffix = " (assumed as in the US; from memory, check RSS-247)" if region == "CA" else ""
    cite = "RSS-247 (as 47 CFR 15.247)" if region == "CA" else "47 CFR 15.247"
    return [
        _band_fit(pid),
        checks.channel_count(Rule(f"{pid}.channels", "Minimum number of hopping channels",
                                  f"{cite}(a)(1)(iii)", cert, "at least 15 channels" + suffix), lambda ctx: 15),
        _us_separation(pid, region, two_thirds_below_dbm=LOW_POWER_DBM),
        checks.occupancy(Rule(f"{pid}.occupancy", "Average time of occupancy", f"{cite}(a)(1)(iii)", cert,
                              "at most 0.4 s on any channel within 0.4 s x number of channels used" + suffix),
                         0.4, lambda ctx: 0.4 * ctx.count),
        checks.conducted_power(Rule(f"{pid}.power", "Peak conducted output power", f"{cite}(b)(1), (b)(4)",
                                    FROM_MEMORY,
                                    "1 W with at least 75 non-overlapping channels, else 0.125 W; above 6 dBi "
                                    "antenna gain the limit falls dB for dB" + suffix), _us2400_power_dbm),
        _us_sequence(pid, region),
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
        checks.conducted_power(Rule(f"{pid}.power", "Peak conducted output power", f"{cite}(b)(1), (b)(4)",
                                    FROM_MEMORY, "1 W; above 6 dBi antenna gain the limit falls dB for dB" + suffix),
                               lambda ctx: 30.0),
        _us_sequence(pid, region),
    ]


def _ca915_eirp_dbm(ctx: HopContext) -> float | None:
    if ctx.count >= 50:
        return 36.0  # 4 W
    if ctx.count >= 25:
        return 30.0  # 1 W
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
        checks.eirp(Rule(f"{pid}.eirp", "Maximum e.i.r.p.", cite, PARTLY_SEEN, "at most 20 dBm e.i.r.p."),
                    lambda ctx: 20.0),
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
    max_erp_dbm: float
    max_duty_fraction: float | None  # None: no duty-cycle limit
    certainty: str
    name: str


# CEPT ERC Rec 70-03 Annex 1 (non-specific short-range devices). ERP = EIRP - 2.15 dB.
EU868_SUBBANDS = (
    SubBand(863.0 * MHZ, 870.0 * MHZ, 10 * math.log10(25), 0.001, FROM_MEMORY, "863-870 MHz"),
    SubBand(868.0 * MHZ, 868.6 * MHZ, 10 * math.log10(25), 0.01, PARTLY_SEEN, "868.0-868.6 MHz"),
    SubBand(868.7 * MHZ, 869.2 * MHZ, 10 * math.log10(25), 0.001, FROM_MEMORY, "868.7-869.2 MHz"),
    SubBand(869.4 * MHZ, 869.65 * MHZ, 10 * math.log10(500), 0.10, PARTLY_SEEN, "869.4-869.65 MHz"),
    SubBand(869.7 * MHZ, 870.0 * MHZ, 10 * math.log10(5), None, FROM_MEMORY, "869.7-870.0 MHz"),
)


def _erp_dbm(ctx: HopContext) -> float:
    return ctx.system.eirp_dbm - 2.15  # e.r.p. = e.i.r.p. - 2.15 dB (half-wave dipole gain)


def _meets(band: SubBand, ctx: HopContext) -> bool:
    duty_ok = band.max_duty_fraction is None or ctx.duty_fraction <= band.max_duty_fraction + 1e-12
    return duty_ok and _erp_dbm(ctx) <= band.max_erp_dbm + 1e-9


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
        ok = erp <= band.max_erp_dbm + 1e-9
        return Finding(rule, PASS if ok else FAIL,
                       f"{erp:.1f} dBm e.r.p. in {band.name} ({band.certainty}), at most {band.max_erp_dbm:.1f} dBm",
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
    ]


def _build() -> dict[str, Profile]:
    us = "47 CFR 15.247"
    ca_note = " (as in the US; from memory, check RSS-247)"
    profiles = [
        Profile("us-915", f"US 902-928 MHz FHSS ({us})", "US", Band(902 * MHZ, 928 * MHZ),
                tuple(_us_915("us-915", "US")), coordination_caution=True),
        Profile("us-2400", f"US 2400-2483.5 MHz FHSS ({us})", "US", Band(2400 * MHZ, 2483.5 * MHZ),
                tuple(_us_2400("us-2400", "US")), coordination_caution=True),
        Profile("us-5800", f"US 5725-5850 MHz FHSS ({us})", "US", Band(5725 * MHZ, 5850 * MHZ),
                tuple(_us_5800("us-5800", "US")), coordination_caution=True),
        Profile("ca-915", "Canada 902-928 MHz FHSS (RSS-247)", "CA", Band(902 * MHZ, 928 * MHZ),
                tuple(_us_915("ca-915", "CA", ca_note) + [checks.eirp(Rule(
                    "ca-915.eirp", "Maximum e.i.r.p.", "RSS-247", FROM_MEMORY,
                    "4 W e.i.r.p. with at least 50 channels, 1 W with 25-49"), _ca915_eirp_dbm)]),
                coordination_caution=True),
        Profile("ca-2400", "Canada 2400-2483.5 MHz FHSS (RSS-247)", "CA", Band(2400 * MHZ, 2483.5 * MHZ),
                tuple(_us_2400("ca-2400", "CA")), coordination_caution=True),
        Profile("ca-5800", "Canada 5725-5850 MHz FHSS (RSS-247)", "CA", Band(5725 * MHZ, 5850 * MHZ),
                tuple(_us_5800("ca-5800", "CA")), coordination_caution=True),
        Profile("eu-2400-adaptive", "EU 2400-2483.5 MHz adaptive FHSS (EN 300 328)", "EU",
                Band(2400 * MHZ, 2483.5 * MHZ), tuple(_en300328("eu-2400-adaptive", adaptive=True))),
        Profile("eu-2400-nonadaptive", "EU 2400-2483.5 MHz non-adaptive FHSS (EN 300 328)", "EU",
                Band(2400 * MHZ, 2483.5 * MHZ), tuple(_en300328("eu-2400-nonadaptive", adaptive=False))),
        Profile("eu-868", "EU 863-870 MHz short-range devices (ERC Rec 70-03)", "EU",
                Band(863 * MHZ, 870 * MHZ), tuple(_eu868("eu-868"))),
        Profile("custom", "Custom band, no regulatory limits", "custom", None, (_band_fit("custom"),)),
    ]
    return {p.id: p for p in profiles}


PROFILES: dict[str, Profile] = _build()


def get_profile(profile_id: str) -> Profile:
    return PROFILES[profile_id]
