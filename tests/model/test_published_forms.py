"""The collision model reduces to published closed forms.

Sources: Bray and Sturman, "Bluetooth: Connect Without Cables" (coexistence
section): n fully loaded, slot-aligned piconets on N channels survive with
(1 - 1/N)^(n - 1), and an exchange of a transmit and an acknowledgement slot
with (1 - 1/N)^(2 (n - 1)). Garg, "Wireless Communications and Networking",
ch. 21: a wideband fixed interferer covering k of N hop channels hits with
probability k/N while it is on.

These forms judge capture by a threshold on median levels: the systems here
have `fading: none` (`cohop.physics.capture`), whose harm is exactly that
threshold; `test_strong_margin_limit` checks that the faded models reach the
same figures when the interferer is far above the threshold.
"""

import math

import pytest

from cohop.assess import assess_site
from cohop.prepare import prepare_site
from tests import sites

N = 79


def system(sid, hop_set=None, **overrides):
    """A test system with the threshold capture model (`fading: none`) the published forms assume."""
    return sites.system(sid, hop_set, fading="none", **overrides)


def _aligned(n: int, hops: int = 1):
    systems = [system(f"p{i}", range(N), time_base_group="piconets", hops_per_attempt=hops) for i in range(n)]
    return assess_site(prepare_site(sites.load(sites.site(systems))))


@pytest.mark.parametrize("n", [2, 3, 5, 8, 10])
def test_slot_aligned_piconets(n):
    result = _aligned(n)
    for s in result.systems:
        assert 1 - s.collision_probability == pytest.approx((1 - 1 / N) ** (n - 1), rel=1e-12)


@pytest.mark.parametrize("n", [2, 4, 7])
def test_transmit_and_acknowledge_slots(n):
    result = _aligned(n, hops=2)
    for s in result.systems:
        assert 1 - s.attempt_collision_probability == pytest.approx((1 - 1 / N) ** (2 * (n - 1)), rel=1e-12)


@pytest.mark.parametrize("k", [1, 5, 20, 22, 40])
def test_wideband_interferer_covers_k_of_n(k):
    # The interferer spans channels 10 .. 10 + k - 1 exactly (edges at channel centres), on all the time,
    # strong enough to hurt co-channel only (excess 11 dB, first adjacent rejection 11 dB).
    # The level is the interferer's total power; a 1 MHz channel receives 1/(k - 1) of a (k - 1) MHz
    # wide emitter, so the total is raised by 10 log10(k - 1) to keep the in-channel excess at 11 dB.
    lo = 2402e6 + 10e6
    width_mhz = k - 1
    itf = {"id": "wideband", "low_hz": lo, "high_hz": lo + width_mhz * 1e6, "activity_fraction": 1.0,
           "levels": [{"system": "victim", "level_dbm": -60.0 + 10 * math.log10(max(width_mhz, 1))}]}
    body = sites.site([system("victim", range(N))], interferers=[itf])
    result = assess_site(prepare_site(sites.load(body)))
    assert result.prepared.interferer_range[0, 0].tolist() == [10, 10 + k]
    assert result.systems[0].collision_probability == pytest.approx(k / N, rel=1e-12)


def test_wideband_interferer_duty_scales_the_hit_rate():
    # Garg ch. 21: k/N "while it is on"; on a share alpha of the time the rate is alpha k / N. The emitter is
    # built as in the test above: edges at the centres of channels 10 and 29, so it covers k = 20 channels,
    # with the in-channel level of the co-channel-only case.
    lo, k = 2402e6 + 10e6, 20
    itf = {"id": "wlan", "low_hz": lo, "high_hz": lo + (k - 1) * 1e6, "activity_fraction": 0.3,
           "levels": [{"system": "victim", "level_dbm": -60.0 + 10 * math.log10(k - 1)}]}
    body = sites.site([system("victim", range(N))], interferers=[itf])
    result = assess_site(prepare_site(sites.load(body)))
    assert result.prepared.interferer_range[0, 0].tolist() == [10, 10 + k]
    assert result.systems[0].collision_probability == pytest.approx(0.3 * k / N, rel=1e-12)


def test_disjoint_hop_sets_do_not_collide():
    # Disjoint hop sets with co-channel-only harm give zero (common practice: the point of disjoint sets) hop sets with co-channel-only harm give zero.
    systems = [system("a", range(0, 79, 3)), system("b", range(1, 79, 3)),
               system("c", range(2, 79, 3))]
    result = assess_site(prepare_site(sites.load(sites.site(systems))))
    assert [s.collision_probability for s in result.systems] == [0.0, 0.0, 0.0]


def test_identical_hop_sets_unsynchronised_first_order():
    # First order (the vulnerable period of unslotted ALOHA, Abramson, AFIPS FJCC 1970, for unequal packets): PER ~ sum alpha (Tv + Ta) / (D N) for light load.
    systems = [system(f"s{i}", range(N), dwell_s=0.01, packet_airtime_s=0.001, activity_fraction=0.2)
               for i in range(4)]
    result = assess_site(prepare_site(sites.load(sites.site(systems))))
    first_order = 3 * 0.2 * (0.001 + 0.001) / (0.01 * N)
    assert result.systems[0].collision_probability == pytest.approx(first_order, rel=0.01)


@pytest.mark.parametrize("fading", ["rayleigh", {"model": "rayleigh", "interference": "rayleigh"},
                                    {"model": "rician", "k_factor_db": 6.0}])
def test_strong_margin_limit(fading):
    # The threshold is the strong-margin limit of the faded models (cohop.physics.capture): with the neighbour
    # 40 dB over the capture threshold co-channel and harmless (below the floor) from the first adjacent
    # channel on, the faded harm of a co-channel transmission is 1 to within 1e-4, so Bray and Sturman's
    # slot-aligned form holds to that accuracy.
    rejection = [{"offset_hz": 1e6, "rejection_db": 90.0}]
    systems = [sites.system(f"p{i}", range(N), time_base_group="g", fading=fading, rejection=rejection,
                            wanted_signal_dbm=-60.0, required_sir_db=11.0, fade_margin_db=30.0) for i in range(3)]
    body = sites.site(systems, coupling_loss_db=31.0)  # I = -31 dBm over a threshold of -71 dBm: 40 dB
    result = assess_site(prepare_site(sites.load(body)))
    for s in result.systems:
        assert 1 - s.collision_probability == pytest.approx((1 - 1 / N) ** 2, abs=1e-4)
