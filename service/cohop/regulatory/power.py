"""Power limits stated in watts, as the rules state them, and compared without rounding.

Each limit is data: its value in watts, the quantity it bounds (conducted
output, e.i.r.p. or e.r.p.), where it comes from and how sure we are of it
(47 CFR 15.247(b), RSS-247, ETSI EN 300 328, CEPT ERC Rec 70-03 Annex 1). Its level in dBm is computed from the watts
(10 log10(W / 1 mW)), never typed in rounded: 0.25 W is 23.979 dBm, not 24,
and 0.125 W is 20.969 dBm, not 21. A measured level passes when it is at
most the limit; the only allowance is `TOLERANCE_DB` of floating-point noise
(1e-9 dB, a relative 2.3e-10 in watts), far below any rounding a user could
type. Messages print as many digits as it takes to show why a level fails.

Antenna gain: the conducted limits assume antennas of at most 6 dBi; above
that 47 CFR 15.247(b)(4) lowers the limit dB for dB, and 15.247(c)(1) relaxes
that for systems used exclusively for fixed point-to-point operation
(2400-2483.5 MHz: 1 dB per 3 dB of gain above 6 dBi; 5725-5850 MHz: none).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from cohop.regulatory.rules import FROM_MEMORY, PARTLY_SEEN, PUBLISHED, SEEN_QUOTED

#: Floating-point noise allowance when comparing a level with a limit, in dB (not a rounding allowance).
TOLERANCE_DB = 1e-9
#: Antenna gain up to which the conducted limits of 47 CFR 15.247(b) hold unchanged (15.247(b)(4)).
GAIN_ALLOWANCE_DBI = 6.0


def dbm_of_watts(watts: float) -> float:
    """10 log10(P / 1 mW): the exact level of a power given in watts (definition of dBm)."""
    return 10.0 * math.log10(watts * 1e3)


def mw_of_dbm(dbm: float) -> float:
    return 10.0 ** (dbm / 10.0)


def within(level_dbm: float, limit_dbm: float) -> bool:
    """At most the limit, allowing only floating-point noise (`TOLERANCE_DB`)."""
    return level_dbm <= limit_dbm + TOLERANCE_DB


@dataclass(frozen=True)
class PowerLimit:
    """A limit as the rule states it: `watts` of `quantity`, under `condition`."""

    watts: float
    quantity: str  # "conducted", "e.i.r.p." or "e.r.p."
    citation: str
    certainty: str
    condition: str

    @property
    def dbm(self) -> float:
        return dbm_of_watts(self.watts)


# --- the limits, in watts ---------------------------------------------------------------------------
# 47 CFR 15.247(b)(2) [mem, seen quoted]: 902-928 MHz, 1 W with at least 50 hopping channels, 0.25 W with 25-49.
US_915_50 = PowerLimit(1.0, "conducted", "47 CFR 15.247(b)(2)", SEEN_QUOTED, "902-928 MHz, at least 50 channels")
US_915_25 = PowerLimit(0.25, "conducted", "47 CFR 15.247(b)(2)", SEEN_QUOTED, "902-928 MHz, 25-49 channels")
# 47 CFR 15.247(b)(1) [mem]: 2400-2483.5 MHz, 1 W with at least 75 non-overlapping channels, else 0.125 W.
US_2400_75 = PowerLimit(1.0, "conducted", "47 CFR 15.247(b)(1)", FROM_MEMORY,
                        "2400-2483.5 MHz, at least 75 non-overlapping channels")
US_2400_OTHER = PowerLimit(0.125, "conducted", "47 CFR 15.247(b)(1)", FROM_MEMORY,
                           "2400-2483.5 MHz, fewer than 75 non-overlapping channels")
# 47 CFR 15.247(b)(1) [mem, seen quoted]: 5725-5850 MHz, 1 W.
US_5800 = PowerLimit(1.0, "conducted", "47 CFR 15.247(b)(1)", FROM_MEMORY, "5725-5850 MHz")
# 47 CFR 15.247(a)(1) [pub]: the 2/3-bandwidth separation at 2400-2483.5 MHz needs an output of at most 125 mW.
US_2400_TWO_THIRDS = PowerLimit(0.125, "conducted", "47 CFR 15.247(a)(1)", PUBLISHED,
                                "2400-2483.5 MHz separation of 2/3 of the 20 dB bandwidth")
# RSS-247 [mem]: 902-928 MHz e.i.r.p. caps, 4 W with at least 50 channels, 1 W with 25-49.
CA_915_EIRP_50 = PowerLimit(4.0, "e.i.r.p.", "RSS-247", FROM_MEMORY, "902-928 MHz, at least 50 channels")
CA_915_EIRP_25 = PowerLimit(1.0, "e.i.r.p.", "RSS-247", FROM_MEMORY, "902-928 MHz, 25-49 channels")
# ETSI EN 300 328 V2.2.2 [partly seen]: 20 dBm (100 mW) e.i.r.p. for FHSS, adaptive or not.
EU_2400_EIRP = PowerLimit(0.1, "e.i.r.p.", "ETSI EN 300 328 V2.2.2", PARTLY_SEEN, "2400-2483.5 MHz FHSS")
# EN 300 328 V2.2.2 [mem]: medium utilisation is duty cycle x e.i.r.p. / 100 mW.
EU_MU_REFERENCE = PowerLimit(0.1, "e.i.r.p.", "ETSI EN 300 328 V2.2.2", FROM_MEMORY,
                             "medium utilisation reference power")


# --- antenna gain -------------------------------------------------------------------------------------

@dataclass(frozen=True)
class GainReduction:
    """How far antenna gain lowers a conducted limit, and the words that say so in a finding."""

    db: float
    note: str = ""


def _db(x: float) -> str:
    return f"{x:.3f}".rstrip("0").rstrip(".")


def db_for_db(gain_dbi: float) -> GainReduction:
    """47 CFR 15.247(b)(4) [mem, seen quoted]: above 6 dBi the conducted limit falls dB for dB."""
    excess = max(0.0, gain_dbi - GAIN_ALLOWANCE_DBI)
    if excess == 0.0:
        return GainReduction(0.0)
    return GainReduction(excess, f"less {_db(excess)} dB: antenna gain {_db(gain_dbi)} dBi is {_db(excess)} dB above "
                                 "6 dBi, dB for dB (15.247(b)(4))")


def point_to_point_2400(gain_dbi: float) -> GainReduction:
    """47 CFR 15.247(c)(1)(i) [mem, seen quoted; check]: fixed point-to-point at 2400-2483.5 MHz, 1 dB less
    conducted power per 3 dB of antenna gain above 6 dBi (read as proportional: a third of a dB per dB)."""
    excess = max(0.0, gain_dbi - GAIN_ALLOWANCE_DBI)
    if excess == 0.0:
        return GainReduction(0.0, "fixed point-to-point: no reduction at 6 dBi or less (15.247(c)(1)(i))")
    cut = excess / 3.0
    return GainReduction(cut, f"less {_db(cut)} dB: fixed point-to-point, 1 dB per 3 dB of the {_db(excess)} dB of "
                              "antenna gain above 6 dBi (15.247(c)(1)(i))")


def point_to_point_5800(gain_dbi: float) -> GainReduction:
    """47 CFR 15.247(c)(1)(ii) [mem, seen quoted; check]: fixed point-to-point at 5725-5850 MHz may use
    antennas above 6 dBi with no reduction of conducted power."""
    return GainReduction(0.0, f"no reduction for the {_db(gain_dbi)} dBi antenna: fixed point-to-point "
                              "(15.247(c)(1)(ii))")


# --- messages -----------------------------------------------------------------------------------------

def _decimals(level_dbm: float, limit_dbm: float) -> int:
    """Three decimals, or as many more as it takes for a failing level to print above its limit."""
    if within(level_dbm, limit_dbm):
        return 3
    for d in range(3, 13):
        if f"{level_dbm:.{d}f}" != f"{limit_dbm:.{d}f}":
            return d
    return 12


def power_text(dbm: float, decimals: int = 3, why: str = "") -> str:
    """"23.990 dBm (250.6 mW)": the level and its power, to `decimals` dB decimals and one more
    significant digit of power; `why` is added inside the brackets ("(250 mW: ...)")."""
    mw = mw_of_dbm(dbm)
    sig = decimals + 1
    watts = f"{mw / 1e3:.{sig}g} W" if mw >= 1e3 else f"{mw:.{sig}g} mW"
    return f"{dbm:.{decimals}f} dBm ({watts}{': ' + why if why else ''})"


def comparison(level_dbm: float, limit_dbm: float, quantity: str, why: str = "") -> str:
    """"23.990 dBm (250.6 mW) conducted, at most 23.979 dBm (250 mW: why)"."""
    d = _decimals(level_dbm, limit_dbm)
    return f"{power_text(level_dbm, d)} {quantity}, at most {power_text(limit_dbm, d, why)}"


def limit_source(limit: PowerLimit, reduced: GainReduction | None = None) -> str:
    """Where a limit comes from: "902-928 MHz, 25-49 channels, 47 CFR 15.247(b)(2)"; when antenna gain
    lowered it, the stated watts and the reduction ("1 W for 902-928 MHz, ...; less 3 dB: ...")."""
    source = f"{limit.condition}, {limit.citation}"
    if reduced is None or not reduced.note:
        return source
    return f"{limit.watts:g} W for {source}; {reduced.note}"
