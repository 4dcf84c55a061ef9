"""Thermal noise.

References
----------
[1] Any radio handbook: kTB with k = 1.380649e-23 J/K (exact, SI 2019),
    T0 = 290 K, i.e. -173.98 dBm/Hz, usually rounded to -174 dBm/Hz.
"""

from __future__ import annotations

import math

BOLTZMANN_J_K = 1.380649e-23
REFERENCE_TEMPERATURE_K = 290.0


def thermal_noise_density_dbm_hz(temperature_k: float = REFERENCE_TEMPERATURE_K) -> float:
    """10 log10(k T / 1 mW) [1]."""
    return 10.0 * math.log10(BOLTZMANN_J_K * temperature_k / 1e-3)


def noise_floor_dbm(bandwidth_hz: float, noise_figure_db: float = 0.0,
                    temperature_k: float = REFERENCE_TEMPERATURE_K) -> float:
    """kTB + NF [1]."""
    return thermal_noise_density_dbm_hz(temperature_k) + 10.0 * math.log10(bandwidth_hz) + noise_figure_db
