"""Capture under fading (cohop.physics.capture) against closed forms and independent numerical integrals.

Sources named at each check: Linnartz, "Narrowband Land-Mobile Radio Networks" (1993) and Kahlon, Szyszkowicz,
Periyalwar and Yanikomeroglu, IEEE Wireless Commun. Lett. 1(5), 2012 (Rayleigh-faded wanted signal: the success
probability factors into exp(-z N / S) and one Laplace-transform term per interferer); Goldsmith, "Wireless
Communications" (2005) ch. 3 (Rician amplitude); scipy.stats.rice and scipy.integrate as reference libraries.
"""

import math

import numpy as np
import pytest
from scipy import integrate
from scipy.stats import rice

from cohop.physics import capture


def _rician_sf(t, k_db):
    """P(s > t) for unit-mean Rician power, from scipy.stats.rice (amplitude; nu^2 = K / (K + 1),
    2 sigma^2 = 1 / (K + 1): Goldsmith ch. 3) - a different scipy distribution from the service's ncx2."""
    k = 10 ** (k_db / 10)
    sigma = math.sqrt(1 / (2 * (k + 1)))
    return rice.sf(math.sqrt(t), math.sqrt(k / (k + 1)) / sigma, scale=sigma)


@pytest.mark.parametrize("excess_db", [-30.0, -10.0, -3.0, 0.0, 3.0, 10.0, 20.0])
def test_rayleigh_steady_is_one_minus_exp(excess_db):
    # Kahlon et al. 2012: a steady interferer contributes exp(-z I / S); harm = 1 - exp(-x), x = 10^(E/10).
    x = 10 ** (excess_db / 10)
    assert capture.harm_probability(excess_db, "rayleigh", "steady") == pytest.approx(-math.expm1(-x), rel=1e-12)
    # and the same from the definition by numerical integration over s ~ Exp(1) (margin 15 dB)
    m = 10 ** (-1.5)
    kept = integrate.quad(lambda s: math.exp(-s), m + x, math.inf)[0] / math.exp(-m)
    assert capture.harm_probability(excess_db, "rayleigh", "steady", margin_db=15.0) == pytest.approx(1 - kept,
                                                                                                      abs=1e-9)


def test_ten_db_below_the_threshold_still_harms():
    # The example: 10 dB below the capture threshold, a Rayleigh-faded wanted signal is destroyed 9.5 % of
    # the time (1 - exp(-0.1)); the threshold model said 0.
    assert capture.harm_probability(-10.0, "rayleigh") == pytest.approx(0.0952, abs=1e-4)
    assert capture.harm_probability(-10.0, "none") == 0.0


@pytest.mark.parametrize("excess_db", [-20.0, -5.0, 0.0, 6.0, 15.0])
def test_rayleigh_faded_interferer(excess_db):
    # Linnartz 1993: a Rayleigh-faded interferer contributes 1 / (1 + z I / S); checked also by integrating over
    # both fades (s, g independent Exp(1)).
    x = 10 ** (excess_db / 10)
    got = capture.harm_probability(excess_db, "rayleigh", "rayleigh")
    assert got == pytest.approx(x / (1 + x), rel=1e-12)
    kept = integrate.quad(lambda g: math.exp(-g) * math.exp(-g * x), 0, math.inf)[0]
    assert got == pytest.approx(1 - kept, abs=1e-9)


def test_several_interferers_factor_for_rayleigh():
    # Linnartz 1993 / Kahlon et al. 2012: with s ~ Exp(1) and Rayleigh-faded interferers g_i ~ Exp(1),
    # P(s > m + sum g_i x_i) = exp(-m) prod 1 / (1 + x_i): checked by a two-dimensional integral (scipy).
    m, x1, x2 = 0.02, 0.5, 2.0
    joint = integrate.dblquad(lambda g2, g1: math.exp(-g1 - g2) * math.exp(-(m + g1 * x1 + g2 * x2)),
                              0, math.inf, 0, math.inf)[0]
    r1 = capture.harm_probability(10 * math.log10(x1), "rayleigh", "rayleigh")
    r2 = capture.harm_probability(10 * math.log10(x2), "rayleigh", "rayleigh")
    assert joint == pytest.approx(math.exp(-m) * (1 - r1) * (1 - r2), rel=1e-6)


@pytest.mark.parametrize("k_db", [0.0, 6.0, 12.0])
@pytest.mark.parametrize("excess_db", [-15.0, -3.0, 0.0, 5.0])
def test_rician_steady_against_scipy_rice(k_db, excess_db):
    # One steady interferer and a Rician-faded wanted signal: harm = 1 - P(s > m + x) / P(s > m), with the
    # survival from scipy.stats.rice (Goldsmith ch. 3), independent of the service's ncx2 form.
    margin_db, x = 12.0, 10 ** (excess_db / 10)
    m = 10 ** (-margin_db / 10)
    want = 1 - _rician_sf(m + x, k_db) / _rician_sf(m, k_db)
    got = capture.harm_probability(excess_db, "rician", "steady", margin_db=margin_db, k_factor_db=k_db)
    assert got == pytest.approx(want, abs=1e-9)


@pytest.mark.parametrize("k_db", [3.0, 10.0])
@pytest.mark.parametrize("excess_db", [-10.0, 0.0, 8.0])
def test_rician_with_faded_interferer_against_quad(k_db, excess_db):
    # The Gauss-Laguerre integral over the interferer's Rayleigh fade against scipy.integrate.quad.
    margin_db, x = 10.0, 10 ** (excess_db / 10)
    m = 10 ** (-margin_db / 10)
    kept = integrate.quad(lambda g: math.exp(-g) * _rician_sf(m + g * x, k_db), 0, math.inf)[0] / _rician_sf(m, k_db)
    got = capture.harm_probability(excess_db, "rician", "rayleigh", margin_db=margin_db, k_factor_db=k_db)
    assert got == pytest.approx(1 - kept, abs=1e-6)


def test_rician_reduces_to_rayleigh_at_k_zero():
    # K = 0 (K-factor -inf dB; here -40 dB) is Rayleigh fading (Goldsmith ch. 3).
    e = np.array([-20.0, -5.0, 0.0, 5.0])
    assert capture.harm_probability(e, "rician", "steady", margin_db=15.0, k_factor_db=-40.0) == pytest.approx(
        capture.harm_probability(e, "rayleigh", "steady"), abs=2e-4)


@pytest.mark.parametrize("wanted,link,k", [("rayleigh", "steady", None), ("rayleigh", "rayleigh", None),
                                           ("rician", "steady", 40.0), ("rician", "rayleigh", 40.0)])
def test_strong_margin_gives_the_threshold(wanted, link, k):
    # Far above the threshold every model destroys the hop; far below, none does: the threshold (fading none) is
    # the limit. With a nearly steady (K = 40 dB) Rician signal the step sits at the threshold itself.
    high = capture.harm_probability(40.0, wanted, link, margin_db=30.0, k_factor_db=k)
    low = capture.harm_probability(-40.0, wanted, link, margin_db=30.0, k_factor_db=k)
    assert high > 1 - 1e-3 and low < 1e-3
    if wanted == "rician" and link == "steady":
        assert capture.harm_probability(-1.0, wanted, link, margin_db=30.0, k_factor_db=k) < 1e-3
        assert capture.harm_probability(1.0, wanted, link, margin_db=30.0, k_factor_db=k) > 1 - 1e-3


def test_steady_link_is_the_conservative_default():
    # 1 - exp(-x) >= x / (1 + x) for every x >= 0 (e^x >= 1 + x): the documented default never harms less.
    e = np.linspace(-40, 30, 141)
    assert capture.DEFAULT_LINK_MODEL == "steady"
    assert np.all(capture.harm_probability(e, "rayleigh", "steady") >= capture.harm_probability(e, "rayleigh",
                                                                                                "rayleigh"))


def test_truncation_below_the_floor():
    rho = np.array([0.0, capture.HARM_FLOOR / 2, capture.HARM_FLOOR, 0.5])
    assert capture.truncated(rho).tolist() == [0.0, 0.0, capture.HARM_FLOOR, 0.5]


# --- the joint law: several transmissions at a Rician victim (capture.joint_contour) ---------------------------

def _joint_collision(k_db, margin_db, transmissions):
    """1 - P(s > m + sum) / P(s > m) through the contour; transmissions: (excess dB, link, activity)."""
    c = capture.joint_contour(k_db, margin_db)
    g = np.ones(c.points.size, dtype=complex)
    for e, link, alpha in transmissions:
        g = g * (1 - alpha * capture.transmission_transform(e, link, c.gain, c.points))
    return 1 - c.success(g) / c.base


@pytest.mark.parametrize("k_db", [-30.0, 0.0, 6.0, 12.0, 20.0])
@pytest.mark.parametrize("margin_db", [6.0, 15.0, 30.0])
@pytest.mark.parametrize("link", ["steady", "rayleigh"])
def test_joint_law_with_one_transmission_is_its_harm(k_db, margin_db, link):
    # one transmission: the joint law is the single-transmission harm (ncx2 and its tilted closed form, above)
    for e in (-20.0, -6.0, 0.0, 4.0, 12.0):
        want = float(capture.harm_probability(e, "rician", link, margin_db, k_db))
        assert _joint_collision(k_db, margin_db, [(e, link, 1.0)]) == pytest.approx(want, rel=1e-8, abs=1e-10)


@pytest.mark.parametrize("k_db", [0.0, 6.0, 15.0])
def test_joint_law_adds_steady_powers(k_db):
    # Goldsmith ch. 3 (scipy.stats.rice, as _rician_sf): steady powers add, P(s > m + x1 + x2 + x3)
    m_db, es = 12.0, (-9.0, -7.0, -5.0)
    m, xs = 10 ** (-m_db / 10), [10 ** (e / 10) for e in es]
    want = 1 - _rician_sf(m + sum(xs), k_db) / _rician_sf(m, k_db)
    got = _joint_collision(k_db, m_db, [(e, "steady", 1.0) for e in es])
    assert got == pytest.approx(want, rel=1e-8)
    product = 1 - math.prod(1 - float(capture.harm_probability(e, "rician", "steady", m_db, k_db)) for e in es)
    assert got > product + 0.02  # the product understates it (log-concave survival): 0.11 against 0.001 at 15 dB


def test_joint_law_with_two_rayleigh_faded_transmissions():
    # E over two unit exponentials of P(s > m + g1 x1 + g2 x2), by scipy.integrate.dblquad
    k_db, m_db, e1, e2 = 6.0, 10.0, -2.0, 1.0
    m, x1, x2 = 10 ** (-m_db / 10), 10 ** (e1 / 10), 10 ** (e2 / 10)
    kept, _ = integrate.dblquad(lambda g2, g1: math.exp(-g1 - g2) * _rician_sf(m + g1 * x1 + g2 * x2, k_db),
                                0, 60, 0, 60, epsabs=1e-12, epsrel=1e-10)
    want = 1 - kept / _rician_sf(m, k_db)
    got = _joint_collision(k_db, m_db, [(e1, "rayleigh", 1.0), (e2, "rayleigh", 1.0)])
    assert got == pytest.approx(want, rel=1e-7)


def test_joint_law_is_linear_in_activity():
    # a transmission present with probability alpha: (1 - alpha) S(m + x1) + alpha S(m + x1 + x2)
    k_db, m_db, e1, e2, alpha = 9.0, 12.0, -3.0, 0.0, 0.3
    m, x1, x2 = 10 ** (-m_db / 10), 10 ** (e1 / 10), 10 ** (e2 / 10)
    kept = (1 - alpha) * _rician_sf(m + x1, k_db) + alpha * _rician_sf(m + x1 + x2, k_db)
    got = _joint_collision(k_db, m_db, [(e1, "steady", 1.0), (e2, "steady", alpha)])
    assert got == pytest.approx(1 - kept / _rician_sf(m, k_db), rel=1e-8)


def test_joint_law_near_rayleigh_is_the_product():
    # K -> 0 is Rayleigh, where the product is exact (Kahlon et al. 2012): exp(-x1) exp(-x2)
    got = _joint_collision(-30.0, 10.0, [(-2.0, "steady", 1.0), (1.0, "steady", 1.0)])
    want = 1 - math.exp(-10 ** -0.2) * math.exp(-10 ** 0.1)
    assert got == pytest.approx(want, rel=5e-3)


def test_joint_law_limits():
    assert capture.joint_contour(25.0, 12.0) is None  # more than JOINT_MAX_TERMS terms: the product, said so
    assert capture.joint_contour(10.0, -10.0) is None  # the noise alone loses nearly every hop
    c = capture.joint_contour(6.0, 12.0)
    assert c.points.size == capture.joint_terms(6.0) + 2
    assert c.base == pytest.approx(_rician_sf(10 ** -1.2, 6.0), rel=1e-10)
