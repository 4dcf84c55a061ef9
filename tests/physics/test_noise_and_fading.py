"""Thermal noise (kTB) and fade probabilities against handbook values."""

import math

import numpy as np
import pytest
from scipy import constants, stats

from cohop.physics import fading, noise


def test_thermal_noise_density():
    # Any radio handbook: kT at 290 K is -173.98 dBm/Hz (rounded -174); k from scipy.constants.
    assert noise.thermal_noise_density_dbm_hz() == pytest.approx(-173.98, abs=0.005)
    assert noise.thermal_noise_density_dbm_hz() == pytest.approx(10 * math.log10(constants.k * 290 * 1e3))


@pytest.mark.parametrize("bw, nf, expected", [(1e6, 0.0, -113.98), (200e3, 6.0, -114.97), (125e3, 3.0, -120.01)])
def test_noise_floor(bw, nf, expected):
    # kTB + NF (handbook): -174 + 10 log10(B) + NF, hand computed with -173.98.
    assert noise.noise_floor_dbm(bw, nf) == pytest.approx(expected, abs=0.01)


@pytest.mark.parametrize("margin_db, expected", [(10.0, 0.0952), (20.0, 0.00995), (30.0, 0.0009995)])
def test_rayleigh_outage(margin_db, expected):
    # Goldsmith, "Wireless Communications", ch. 3: P_out = 1 - exp(-10^(-M/10));
    # 10 dB: 0.095, 20 dB: 0.00995 (Rayleigh CDF 1 - exp(-x), Rappaport, "Wireless Communications", 2nd ed., ch. 5).
    assert fading.rayleigh_fade_probability(margin_db) == pytest.approx(expected, rel=2e-3)


def test_rician_with_vanishing_k_is_rayleigh():
    # K -> 0 reduces a Rician channel to Rayleigh (Goldsmith ch. 3).
    for m in (5.0, 10.0, 20.0):
        assert fading.rician_fade_probability(m, -60.0) == pytest.approx(fading.rayleigh_fade_probability(m),
                                                                         rel=1e-5)


@pytest.mark.parametrize("k_db", [0.0, 3.0, 6.0, 10.0])
@pytest.mark.parametrize("margin_db", [5.0, 10.0, 20.0])
def test_rician_matches_scipy_rice_amplitude(k_db, margin_db):
    # Reference library: scipy.stats.rice for the amplitude, normalised to unit mean power:
    # nu^2 = K / (K + 1), 2 sigma^2 = 1 / (K + 1); outage P(r^2 < 10^(-M/10)).
    k = 10 ** (k_db / 10)
    sigma = math.sqrt(1 / (2 * (k + 1)))
    nu = math.sqrt(k / (k + 1))
    rho = 10 ** (-margin_db / 10)
    expected = stats.rice.cdf(math.sqrt(rho) / sigma, nu / sigma)
    assert fading.rician_fade_probability(margin_db, k_db) == pytest.approx(expected, rel=1e-6)


def test_rician_fades_less_as_k_grows():
    # A line-of-sight component lowers the outage (Goldsmith ch. 3).
    values = [fading.rician_fade_probability(15.0, k) for k in (-10.0, 0.0, 5.0, 10.0, 15.0)]
    assert all(a > b for a, b in zip(values, values[1:]))


def test_rayleigh_monte_carlo():
    # Exponential power with unit mean (Rayleigh envelope); 400k draws, 5-sigma tolerance.
    rng = np.random.default_rng(7)
    power = rng.exponential(1.0, 400_000)
    p = float(np.mean(power < 10 ** (-1.0)))
    sd = math.sqrt(p * (1 - p) / power.size)
    assert abs(p - fading.rayleigh_fade_probability(10.0)) < 5 * sd


def test_fade_model_dispatch():
    assert fading.fade_probability("none", 3.0) == 0.0
    assert fading.fade_probability("rayleigh", 10.0) == pytest.approx(1 - math.exp(-0.1))
    with pytest.raises(ValueError):
        fading.fade_probability("nakagami", 10.0)
