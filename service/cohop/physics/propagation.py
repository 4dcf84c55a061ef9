"""Path loss models. All functions are pure and accept floats or numpy arrays.

Units: frequency [Hz], distance [m], loss [dB].

References
----------
[1] ITU-R P.525, "Calculation of free-space attenuation", eq. (4):
    L = 32.45 + 20 log10(f / MHz) + 20 log10(d / km) dB. The exact constant is
    20 log10(4 pi 1e9 / c) = 32.448 dB; we compute it from c.
[2] T. S. Rappaport, "Characterization of UHF multipath radio channels in
    factory buildings", IEEE Trans. Antennas Propag. 37(8), 1989: log-distance
    law L(d) = L(d0) + 10 n log10(d / d0), n about 2.2 at 1300 MHz.
[3] ITU-R P.1238 (site-general indoor model, early editions):
    L = 20 log10(f / MHz) + N log10(d / m) + Lf(n) - 28 dB, with the distance
    power-loss coefficient N and floor penetration Lf(n) from its tables 2 and
    3, as reproduced in several texts (check the edition you cite).
"""

from __future__ import annotations

import math

import numpy as np

SPEED_OF_LIGHT_M_S = 299_792_458.0

#: 20 log10(4 pi 1e9 / c): the constant of [1] eq. (4) for f in MHz, d in km.
FREE_SPACE_CONSTANT_DB = 20.0 * math.log10(4.0 * math.pi * 1e9 / SPEED_OF_LIGHT_M_S)

#: Shortest distance the models are used at; closer pairs are evaluated here.
MIN_DISTANCE_M = 1.0


def free_space_loss_db(frequency_hz, distance_m):
    """Free-space basic transmission loss [1] eq. (4)."""
    f_mhz = np.asarray(frequency_hz, dtype=float) / 1e6
    d_km = np.maximum(np.asarray(distance_m, dtype=float), MIN_DISTANCE_M) / 1e3
    return FREE_SPACE_CONSTANT_DB + 20.0 * np.log10(f_mhz) + 20.0 * np.log10(d_km)


def log_distance_loss_db(distance_m, exponent, reference_loss_db, reference_distance_m):
    """Log-distance path loss [2]: L(d0) + 10 n log10(d / d0) (median, no X_sigma)."""
    d = np.maximum(np.asarray(distance_m, dtype=float), MIN_DISTANCE_M)
    return reference_loss_db + 10.0 * exponent * np.log10(d / reference_distance_m)


def p1238_loss_db(frequency_hz, distance_m, power_loss_coefficient, floor_loss_db):
    """ITU-R P.1238 site-general indoor loss [3]; `floor_loss_db` is Lf(n)."""
    f_mhz = np.asarray(frequency_hz, dtype=float) / 1e6
    d = np.maximum(np.asarray(distance_m, dtype=float), MIN_DISTANCE_M)
    return 20.0 * np.log10(f_mhz) + power_loss_coefficient * np.log10(d) + floor_loss_db - 28.0


# [3] table 2: distance power-loss coefficient N, by frequency range and
# environment. Only the entries of the early edition's table that several texts reproduce are here.
_P1238_N = {
    "900MHz": {"office": 33.0, "commercial": 20.0},
    "1.8-2GHz": {"residential": 28.0, "office": 30.0, "commercial": 22.0},
}

# Frequency ranges [Hz] that we map onto the table's rows (our choice: the
# rows are given for "900 MHz" and "1.8-2 GHz").
_P1238_ROWS = (("900MHz", 860e6, 960e6), ("1.8-2GHz", 1.8e9, 2.0e9))


def p1238_row(frequency_hz: float) -> str | None:
    for name, lo, hi in _P1238_ROWS:
        if lo <= frequency_hz <= hi:
            return name
    return None


def p1238_power_loss_coefficient(frequency_hz: float, environment: str) -> float | None:
    """N from [3] table 2, or None where the table has no entry."""
    row = p1238_row(frequency_hz)
    return None if row is None else _P1238_N[row].get(environment)


def p1238_floor_loss_db(frequency_hz: float, environment: str, floors: int) -> float | None:
    """Lf(n) from [3] table 3 for n floors, or None where the table has none.

    900 MHz office: 9, 19, 24 dB for 1, 2, 3 floors; 1.8-2 GHz office:
    15 + 4 (n - 1) dB. Zero floors: 0 dB.
    """
    if floors == 0:
        return 0.0
    row = p1238_row(frequency_hz)
    if row == "900MHz" and environment == "office" and 1 <= floors <= 3:
        return (9.0, 19.0, 24.0)[floors - 1]
    if row == "1.8-2GHz" and environment == "office":
        return 15.0 + 4.0 * (floors - 1)
    return None
