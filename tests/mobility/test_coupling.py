"""Coupling of systems that move: the worst position pair, by hand with ITU-R P.525 eq. (4)."""

from __future__ import annotations

import numpy as np
import pytest

from cohop.errors import SiteError
from cohop.physics.geometry import axis_sample_count, axis_samples, rectangle_samples
from cohop.prepare import prepare_site
from cohop.site import Area
from cohop.site_rules import area_point_count, load_site
from tests import sites
from tests.mobility.helpers import at, mid_frequency_hz, moving_site, p525_loss_db

# P.525's printed constant 32.45 against our 32.448 from c: they agree to 0.003 dB (tests/physics/test_propagation).
P525_TOL_DB = 0.003


def test_worst_coupling_is_the_least_loss_over_position_pairs():
    # Victim at x = 0, 30, 60; source at x = 100: distances 100, 70, 40 m; the worst pair is 40 m apart.
    body = moving_site([at(0), at(30), at(60)], at(100), margin_db=6.0)
    body["systems"][0]["antenna_gain_dbi"] = 2.0
    body["systems"][1]["antenna_gain_dbi"] = 3.0
    prep = prepare_site(load_site(body))
    f = mid_frequency_hz(20)
    # coupling = path loss - both antenna gains - the planning margin (README, coupling)
    expected = p525_loss_db(f, 40.0) - 2.0 - 3.0 - 6.0
    assert prep.coupling_loss_db[1, 0] == pytest.approx(expected, abs=P525_TOL_DB)
    assert prep.coupling_loss_db[0, 1] == pytest.approx(expected, abs=P525_TOL_DB)  # the same pair both ways
    # and not the loss at any other pair
    assert prep.coupling_loss_db[1, 0] < p525_loss_db(f, 70.0) - 11.0 - 1.0


def test_two_moving_systems_meet_at_their_closest_pair():
    # Victim along y = 0 (x 0, 50), source along y = 30 (x 200, 80): closest pair (50, 0)-(80, 30), 42.43 m.
    body = moving_site([at(0), at(50)], at(0), n_channels=20)
    body["systems"][1].pop("position")
    body["systems"][1]["positions"] = [at(200, 30), at(80, 30)]
    prep = prepare_site(load_site(body))
    d = float(np.hypot(30.0, 30.0))
    assert prep.coupling_loss_db[1, 0] == pytest.approx(p525_loss_db(mid_frequency_hz(20), d), abs=P525_TOL_DB)


def test_floors_count_in_the_worst_pair():
    # Same plan position two floors apart (4 m storeys, 20 dB per floor) against 30 m away on the same floor:
    # P.525 at 8 m + 40 dB is about 98 dB, above P.525 at 30 m (about 69.6 dB), so the same-floor pair is worst.
    body = moving_site([at(0, 0, 2), at(30, 0, 0)], at(0, 0, 0))
    body["coupling"]["propagation"]["floor_loss_db"] = 20.0
    prep = prepare_site(load_site(body))
    f = mid_frequency_hz(20)
    assert prep.coupling_loss_db[1, 0] == pytest.approx(p525_loss_db(f, 30.0), abs=P525_TOL_DB)
    body["systems"][0]["positions"] = [at(0, 0, 2), at(30, 0, 1)]  # now every pair crosses floors
    prep = prepare_site(load_site(body))
    expected = min(p525_loss_db(f, 8.0) + 40.0, p525_loss_db(f, float(np.hypot(30.0, 4.0))) + 20.0)
    assert prep.coupling_loss_db[1, 0] == pytest.approx(expected, abs=P525_TOL_DB)


def test_interferer_reaches_a_moving_system_at_its_nearest_position():
    body = moving_site([at(0), at(90)], at(500))
    body["interferers"] = [{"id": "oven", "centre_hz": 2450e6, "width_hz": 1e6, "eirp_dbm": 20.0,
                            "position": at(100)}]
    prep = prepare_site(load_site(body))
    # level = EIRP - path loss + receive gain (0 dBi), at the nearest position: 10 m (victim gain 0 dBi)
    expected = 20.0 - p525_loss_db(mid_frequency_hz(20), 10.0)
    assert prep.interferer_links[0][0].level_dbm == pytest.approx(expected, abs=P525_TOL_DB)


def test_explicit_coupling_ignores_positions():
    body = moving_site([at(0), at(60)], at(100))
    body["coupling"]["entries"] = [{"from_system": "agv", "to_system": "crane", "loss_db": 123.0}]
    prep = prepare_site(load_site(body))
    assert prep.coupling_loss_db[1, 0] == 123.0 and prep.coupling_loss_db[0, 1] == 123.0


@pytest.mark.parametrize("low, high, step, expected", [
    (0.0, 10.0, 5.0, [0.0, 5.0, 10.0]),  # the far edge on the grid
    (0.0, 11.0, 5.0, [0.0, 5.0, 10.0, 11.0]),  # ... and off it: added
    (0.0, 3.0, 5.0, [0.0, 3.0]),  # a step wider than the side: both edges
    (7.0, 7.0, 5.0, [7.0]),  # no width: one point
    (0.0, 0.3, 0.1, [0.0, 0.1, 0.2, 0.3]),  # float noise in 0.3 / 0.1 adds no extra point
])
def test_axis_samples(low, high, step, expected):
    got = axis_samples(low, high, step)
    assert got == pytest.approx(expected)
    assert axis_sample_count(low, high, step) == len(expected)
    assert np.all(np.diff(got) <= step + 1e-12)


def test_area_sampling_counts():
    area = Area(x_min_m=180.0, x_max_m=260.0, y_min_m=180.0, y_max_m=250.0, step_m=20.0)
    points = area.points()
    # x: 180, 200, 220, 240, 260 (5); y: 180, 200, 220, 240, 250 (5): 25 points, x fastest
    assert len(points) == 25
    assert area_point_count({"x_min_m": 180.0, "x_max_m": 260.0, "y_min_m": 180.0, "y_max_m": 250.0,
                             "step_m": 20.0}) == 25
    assert [(p.x_m, p.y_m) for p in points[:6]] == [(180, 180), (200, 180), (220, 180), (240, 180), (260, 180),
                                                    (180, 200)]
    assert points[-1].x_m == 260.0 and points[-1].y_m == 250.0
    xs, ys = rectangle_samples(0.0, 1.0, 0.0, 1.0, 1.0)
    assert sorted(zip(xs, ys)) == [(0, 0), (0, 1), (1, 0), (1, 1)]


def test_area_couples_at_its_corner_nearest_the_source():
    # Area [0, 40] x [0, 40] sampled every 20 m; source at (100, 100): nearest sample (40, 40), 84.85 m.
    body = moving_site([at(0)], at(100, 100))
    crane = body["systems"][0]
    crane.pop("positions")
    crane["area"] = {"x_min_m": 0.0, "x_max_m": 40.0, "y_min_m": 0.0, "y_max_m": 40.0, "step_m": 20.0}
    site = load_site(body)
    assert len(site.systems[0].sampled_positions()) == 9
    prep = prepare_site(site)
    d = float(np.hypot(60.0, 60.0))
    assert prep.coupling_loss_db[1, 0] == pytest.approx(p525_loss_db(mid_frequency_hz(20), d), abs=P525_TOL_DB)


def test_a_survey_position_stands_for_a_moving_system_near_any_of_its_positions():
    body = moving_site([at(0), at(200)], at(100, 100))
    body["surveys"] = [{"id": "walk", "position": at(205), "radius_m": 10.0, "frequencies_hz": [2402e6, 2403e6],
                        "levels_dbm": [-90.0, -90.0], "resolution_bandwidth_hz": 1e5}]
    assert load_site(body).surveys[0].position is not None  # the survey reaches the crane at x = 200
    body["systems"][0]["positions"] = [at(0), at(100)]
    with pytest.raises(SiteError, match="nearest is 'crane'"):
        load_site(body)


def test_fixed_sites_unchanged():
    # A fixed site's coupling is still one path loss per pair (the sampled positions are its one position).
    body = sites.site([sites.system("a", position=at(0)), sites.system("b", position=at(25))],
                      coupling_loss_db=None, n_channels=20)
    body["coupling"] = {"propagation": {"model": "free_space"}}
    prep = prepare_site(load_site(body))
    assert prep.coupling_loss_db[0, 1] == pytest.approx(p525_loss_db(mid_frequency_hz(20), 25.0), abs=P525_TOL_DB)


def test_the_all_pairs_coupling_equals_the_least_loss_of_each_pair():
    """prepare computes every pair's least path loss from one matrix over all sampled positions; each entry is
    the minimum over that pair's own positions (checked pair by pair: the least loss of `position_losses_db` over that pair's positions), and a given
    entry still overrides it."""
    from cohop import samples
    from cohop.prepare import position_losses_db

    body = samples.load("container_terminal")["site"]
    body["systems"][1]["area"] = {"x_min_m": 0.0, "x_max_m": 60.0, "y_min_m": 10.0, "y_max_m": 30.0,
                                  "step_m": 20.0}
    body["systems"][1].pop("position", None)
    body["systems"][1].pop("positions", None)
    site = load_site(body)
    prep = prepare_site(site)
    prop, f_mid = site.coupling.propagation, float((prep.centres_hz[0] + prep.centres_hz[-1]) / 2)
    places = [s.sampled_positions() for s in site.systems]
    assert len(places[1]) > 1 and any(len(p) > 1 for i, p in enumerate(places) if i != 1)
    for a, source in enumerate(site.systems):
        for v, victim in enumerate(site.systems):
            if a == v or prep.coupling_explicit[a, v] or not places[a] or not places[v]:
                continue
            want = (position_losses_db(prop, f_mid, places[a], places[v]).min() - source.antenna_gain_dbi
                    - victim.antenna_gain_dbi - prop.margin_db)
            assert prep.coupling_loss_db[a, v] == pytest.approx(want, abs=1e-9), (source.id, victim.id)
    for e in site.coupling.entries:
        idx = site.system_index()
        assert prep.coupling_loss_db[idx[e.from_system], idx[e.to_system]] == e.loss_db
