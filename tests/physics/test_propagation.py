"""Path loss against ITU-R P.525, ITU-R P.1238 and the log-distance law."""

import math

import pytest
from scipy import constants

from cohop.physics import propagation as prop


def test_free_space_constant_matches_speed_of_light():
    # ITU-R P.525 eq. (4): the constant is 20 log10(4 pi 1e9 / c) = 32.448 dB;
    # c from scipy.constants (CODATA) as the reference library.
    expected = 20 * math.log10(4 * math.pi * 1e9 / constants.c)
    assert prop.FREE_SPACE_CONSTANT_DB == pytest.approx(expected, abs=1e-9)
    assert prop.FREE_SPACE_CONSTANT_DB == pytest.approx(32.448, abs=5e-4)


@pytest.mark.parametrize("f_mhz, d_km", [(915, 1.0), (2400, 1.0), (2400, 0.1), (868, 2.5), (5800, 0.05)])
def test_free_space_loss_matches_p525_rounded_form(f_mhz, d_km):
    # ITU-R P.525 eq. (4) with its printed constant 32.45; ours uses 32.448, so they agree to 0.003 dB.
    printed = 32.45 + 20 * math.log10(f_mhz) + 20 * math.log10(d_km)
    assert prop.free_space_loss_db(f_mhz * 1e6, d_km * 1e3) == pytest.approx(printed, abs=0.003)


def test_free_space_worked_value_2400mhz_1km():
    # Common practice: about 100 dB at 2.4 GHz over 1 km (32.45 + 67.60 = 100.05 by P.525).
    assert prop.free_space_loss_db(2.4e9, 1000.0) == pytest.approx(100.05, abs=0.01)


def test_free_space_twenty_db_per_decade():
    # ITU-R P.525: 20 log10 in both distance and frequency.
    base = prop.free_space_loss_db(900e6, 100.0)
    assert prop.free_space_loss_db(900e6, 1000.0) - base == pytest.approx(20.0)
    assert prop.free_space_loss_db(9e9, 100.0) - base == pytest.approx(20.0)


def test_log_distance_reduces_to_reference_and_slope():
    # Rappaport 1989: L(d) = L(d0) + 10 n log10(d / d0); n = 2.2 measured in factories at 1300 MHz.
    assert prop.log_distance_loss_db(10.0, 2.2, 60.0, 10.0) == pytest.approx(60.0)
    assert prop.log_distance_loss_db(100.0, 2.2, 60.0, 10.0) == pytest.approx(82.0)


def test_log_distance_with_exponent_two_equals_free_space():
    # With n = 2 and L(d0) the free-space loss, the law is free space (P.525) at every distance.
    f = 915e6
    ref = prop.free_space_loss_db(f, 1.0)
    for d in (3.0, 50.0, 700.0):
        assert prop.log_distance_loss_db(d, 2.0, ref, 1.0) == pytest.approx(prop.free_space_loss_db(f, d))


# ITU-R P.1238 table 2 (distance power-loss coefficient N) and table 3 (floor penetration
# Lf), early editions, as recalled from memory; check the edition you cite.
@pytest.mark.parametrize("f_hz, env, n", [
    (915e6, "office", 33.0), (915e6, "commercial", 20.0),
    (1.9e9, "residential", 28.0), (1.9e9, "office", 30.0), (1.9e9, "commercial", 22.0),
])
def test_p1238_power_loss_coefficients(f_hz, env, n):
    assert prop.p1238_power_loss_coefficient(f_hz, env) == n


def test_p1238_has_no_entry_outside_its_rows():
    # P.1238's early table has no 2.4 GHz row and no 900 MHz residential entry here.
    assert prop.p1238_power_loss_coefficient(2.44e9, "office") is None
    assert prop.p1238_power_loss_coefficient(915e6, "residential") is None


@pytest.mark.parametrize("floors, lf", [(0, 0.0), (1, 9.0), (2, 19.0), (3, 24.0)])
def test_p1238_floor_loss_900mhz_office(floors, lf):
    # ITU-R P.1238 table 3: 900 MHz office 9, 19, 24 dB for 1, 2, 3 floors.
    assert prop.p1238_floor_loss_db(915e6, "office", floors) == lf


@pytest.mark.parametrize("floors", [1, 2, 3, 5])
def test_p1238_floor_loss_2ghz_office(floors):
    # ITU-R P.1238 table 3: 1.8-2 GHz office 15 + 4 (n - 1) dB.
    assert prop.p1238_floor_loss_db(1.9e9, "office", floors) == 15 + 4 * (floors - 1)


def test_p1238_worked_example():
    # ITU-R P.1238: L = 20 log10 f + N log10 d + Lf(n) - 28; 900 MHz office, 20 m, one floor:
    # 20 log10(900) + 33 log10(20) + 9 - 28 = 59.085 + 42.934 + 9 - 28 = 83.02 dB (hand computed).
    assert prop.p1238_loss_db(900e6, 20.0, 33.0, 9.0) == pytest.approx(83.02, abs=0.01)
