"""Figures of systems that move: per position, the worst position named, and the mean policy.

The per-position figures are checked against an independent route: the same site with the moving system
fixed at each position in turn (a plain `position`), evaluated by the ordinary assessment.
"""

from __future__ import annotations

import copy

import numpy as np
import pytest

from cohop.assess import assess_site
from cohop.jobs.answers import assessment_answer
from cohop.prepare import prepare_site
from cohop.site_rules import load_site
from tests.mobility.helpers import at, moving_site

PLACES = [at(0), at(60), at(30), at(90)]  # the crane's stops; the source stands at x = 120
SOURCE = at(120)


def _answer(body):
    return assessment_answer(assess_site(prepare_site(load_site(body))), caution=False)


def _fixed_at(body, place):
    """The same site with the crane fixed at one place."""
    fixed = copy.deepcopy(body)
    crane = fixed["systems"][0]
    crane.pop("positions")
    crane["position"] = place
    return assess_site(prepare_site(load_site(fixed))).systems[0]


@pytest.fixture(scope="module")
def body():
    # excess over the crane's SIR threshold: 40.9 - 20 log10(d / m) dB (P.525 at 2.41 GHz, 10 dBm source,
    # -60 dBm wanted, 11 dB SIR): none at 120 m, co-channel at 60 and 90 m, co-channel and 1 MHz (11 dB rejection) at 30 m
    return moving_site(PLACES, SOURCE, policy="mean", n_channels=20)


def test_per_position_figures_equal_the_site_with_the_system_fixed_there(body):
    answer = _answer(body)
    crane = answer.systems[0].mobility
    fixed = [_fixed_at(body, p) for p in PLACES]
    rates = [f.collision_probability for f in fixed]
    assert len(set(np.round(rates, 12))) > 1, "the positions must differ in harm for this test to mean anything"
    # the worst position: the highest per-hop collision of the fixed evaluations (nearest the source: x = 90)
    worst = int(np.argmax(rates))
    assert crane.worst.index == worst == 3
    assert (crane.worst.position.x_m, crane.worst.position.y_m) == (90.0, 0.0)
    assert crane.worst.collision_probability == pytest.approx(rates[worst], rel=1e-12)
    assert crane.worst.residual_loss_probability == pytest.approx(fixed[worst].residual_loss_probability,
                                                                  rel=1e-12)
    # mean: the arithmetic mean of the fixed evaluations, every position weighted equally
    assert crane.mean.collision_probability == pytest.approx(np.mean(rates), rel=1e-12)
    assert crane.mean.expected_attempts == pytest.approx(np.mean([f.expected_attempts for f in fixed]), rel=1e-12)


def test_mean_at_most_worst_position_at_most_headline(body):
    answer = _answer(body)
    for result in answer.systems:
        m = result.mobility
        assert m is not None and m.positions_matter
        assert m.mean.collision_probability <= m.worst.collision_probability + 1e-15
        assert m.worst.collision_probability <= result.figures.collision_probability + 1e-15
        assert m.mean.residual_loss_probability <= m.worst.residual_loss_probability + 1e-15
    # one source: its worst pair is the crane's worst position, so the headline is exactly that position's
    crane = answer.systems[0]
    assert crane.figures.collision_probability == pytest.approx(crane.mobility.worst.collision_probability)
    assert crane.mobility.mean.collision_probability < crane.mobility.worst.collision_probability


def test_headline_combines_the_worst_positions_of_different_sources():
    # Two sources at either end of the rail: no one position of the crane is near both, so the headline
    # (each pair at its worst position pair) is strictly worse than the figures at any one position.
    body = moving_site([at(0), at(200)], at(-30), policy="worst", n_channels=20)
    second = copy.deepcopy(body["systems"][1])
    second.update(id="agv2", position=at(230))
    body["systems"].append(second)
    answer = _answer(body)
    crane = answer.systems[0]
    assert crane.mobility.mean is None  # policy worst: no mean shown
    assert crane.mobility.worst.collision_probability < crane.figures.collision_probability
    fixed = [_fixed_at(body, p) for p in (at(0), at(200))]
    assert crane.mobility.worst.collision_probability == pytest.approx(
        max(f.collision_probability for f in fixed), rel=1e-12)


def test_explicit_coupling_makes_positions_irrelevant(body):
    explicit = copy.deepcopy(body)
    explicit["coupling"]["entries"] = [{"from_system": "agv", "to_system": "crane", "loss_db": 70.0}]
    crane = _answer(explicit).systems[0].mobility
    assert crane.positions_matter is False and crane.worst is None and crane.mean is None
    assert "given explicitly" in crane.note


def test_fixed_sites_carry_no_mobility_and_no_assumption():
    body = moving_site([at(0)], SOURCE)  # a single entry in positions: the system does not move
    answer = _answer(body)
    assert all(r.mobility is None for r in answer.systems)
    assert not any("move" in a for a in answer.assumptions)
