"""Objectives on the evaluated figures (cohop.planning.objectives): the retry model's sensitivity to per-hop
collision, the per-system weights of the rounds, and plans under residual_loss against weighted_sum."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from cohop.assess import assess_site
from cohop.planning.engine import SolveSettings
from cohop.planning.objectives import (MIN_ROUND_OVERHEADS, MIN_ROUND_WORK_S, ROUND_SHARES, WEIGHT_FLOOR,
                                       attempt_loss_of, attempt_sensitivity, ceiling_shares, margin_gradient,
                                       objective_values, plan_for_objective, residual_gradient, residual_of,
                                       residual_sensitivity, round_count, round_weights, with_weights)
from cohop.planning.requirements import OBJECTIVES, PlanRequirements, SystemRequirement
from cohop.prepare import prepare_site
from cohop.site_rules import load_site
from tests.plan_api.conftest import SIZES, small_site

CASES = [(0.0, 0.0, 1, 0), (0.05, 0.01, 1, 3), (0.2, 0.05, 2, 0), (0.12, 0.3, 2, 1), (0.5, 0.1, 3, 7),
         (0.01, 0.001, 4, 2), (0.9, 0.2, 1, 5)]


@pytest.mark.parametrize("c, f, n, k", CASES)
def test_sensitivity_matches_a_central_difference_of_the_retry_model(c, f, n, k):
    # the analytic dR/dc against a central finite difference of the residual loss evaluated directly
    # (cohop.stats.retries, the functions the assessment uses); the step is small against c and 1 - c,
    # so the difference's O(h^2) error is far below the tolerance (common practice)
    h = 1e-6
    lo, hi = max(c - h, 0.0), c + h
    fd = (float(residual_of(hi, f, n, k)) - float(residual_of(lo, f, n, k))) / (hi - lo)
    assert float(residual_sensitivity(c, f, n, k)) == pytest.approx(fd, rel=1e-5, abs=1e-9)
    fd = (float(attempt_loss_of(hi, f, n)) - float(attempt_loss_of(lo, f, n))) / (hi - lo)
    assert float(attempt_sensitivity(c, f, n)) == pytest.approx(fd, rel=1e-5, abs=1e-9)


def fragile_site(retry_limit=0, hops=2) -> dict:
    """The plan tests' small site (4 systems on 30 channels) with system a fragile: few retries and several
    hops per attempt carry its residual loss; the others retry seven times."""
    body = small_site()
    for s in body["systems"]:
        s["retry_limit"] = 7
    body["systems"][0].update(retry_limit=retry_limit, hops_per_attempt=hops)
    return body


def requirements(**kw) -> PlanRequirements:
    return PlanRequirements(systems=tuple(SystemRequirement(system=s, min_channels=n, max_channels=n)
                                          for s, n in SIZES.items()), **{"time_limit_s": 2.0, **kw})


@pytest.fixture(scope="module")
def prep():
    body = fragile_site()
    body["systems"][1].update(retry_limit=1, hops_per_attempt=3)
    return prepare_site(load_site(body))


def test_residual_model_is_the_assessments(prep):
    sets = [np.arange(0, 10), np.arange(5, 15), np.arange(12, 20), np.arange(20, 26)]
    a = assess_site(prep, hop_sets=sets, detail="system")
    for f, s, fade in zip(a.systems, prep.site.systems, prep.fade_probability):
        assert f.residual_loss_probability == pytest.approx(
            float(residual_of(f.collision_probability, fade, s.hops_per_attempt, s.retry_limit)), rel=1e-12)


def test_gradient_predicts_the_evaluated_change_of_a_one_channel_move(prep):
    # direct evaluation: two plans that differ by one channel of system b, each assessed in full; the
    # trapezoid rule on the analytic gradient has an O(dc^3) error (common practice), the first-order
    # prediction an O(dc^2) one
    sets = [np.arange(0, 10), np.arange(5, 15), np.arange(12, 20), np.arange(20, 26)]
    moved = [s.copy() for s in sets]
    moved[1] = np.array(sorted(set(sets[1].tolist()) - {5} | {29}))
    before, after = (assess_site(prep, hop_sets=x, detail="system") for x in (sets, moved))
    c1, c2 = (np.array([f.collision_probability for f in a.systems]) for a in (before, after))
    assert np.abs(c2 - c1).max() > 0.01  # the move changes the collisions
    actual = objective_values(after).residual_loss - objective_values(before).residual_loss
    g1, g2 = residual_gradient(prep, c1), residual_gradient(prep, c2)
    assert 0.5 * (g1 + g2) @ (c2 - c1) == pytest.approx(actual, rel=1e-3)
    assert g1 @ (c2 - c1) == pytest.approx(actual, rel=0.05)


def test_gradient_is_priority_weighted(prep):
    c = np.full(prep.n_systems, 0.05)
    g = residual_gradient(prep, c)
    for v, s in enumerate(prep.site.systems):
        alone = float(residual_sensitivity(0.05, prep.fade_probability[v], s.hops_per_attempt, s.retry_limit))
        assert g[v] == pytest.approx(s.priority_weight * alone, rel=1e-12)


def test_round_shares_sum_to_one_and_short_limits_get_fewer_rounds():
    assert all(len(v) == k and sum(v) == pytest.approx(1.0) for k, v in ROUND_SHARES.items())
    most = max(ROUND_SHARES)
    assert round_count(100.0, 0.01) == most
    assert round_count(0.1, 0.01) == 1
    # k rounds need their later rounds' share of the work, after the set-up, at the minimum
    counts = [round_count(w, 0.05) for w in np.linspace(0.0, 10.0, 201)]
    assert counts == sorted(counts) and set(counts) == set(ROUND_SHARES)
    least = max(MIN_ROUND_WORK_S, MIN_ROUND_OVERHEADS * 0.05)
    for w, k in zip(np.linspace(0.0, 10.0, 201), counts):
        if k > 1:
            assert min(ROUND_SHARES[k][1:]) * (w - (k - 1) * 0.05) >= least - 1e-12
        if k < max(ROUND_SHARES):  # one more round would not get its minimum
            assert min(ROUND_SHARES[k + 1][1:]) * (w - k * 0.05) < least


def test_round_weights_are_scaled_to_one_and_floored():
    w = round_weights(np.array([4.0, 2.0, 1e-9, 0.0]))
    assert w.tolist() == pytest.approx([1.0, 0.5, WEIGHT_FLOOR, WEIGHT_FLOOR])
    assert round_weights(np.zeros(3)).tolist() == [1.0, 1.0, 1.0]


def test_with_weights_changes_only_the_priority_weights(prep):
    changed = with_weights(prep, [3.0, 2.0, 1.0, 0.5])
    assert [s.priority_weight for s in changed.site.systems] == [3.0, 2.0, 1.0, 0.5]
    for s, t in zip(prep.site.systems, changed.site.systems):
        assert dataclasses.replace(t, priority_weight=s.priority_weight) == s
    assert changed.fade_probability is prep.fade_probability


def test_objective_values_agree_with_the_assessment_summary(prep):
    sets = [np.arange(0, 10), np.arange(5, 15), np.arange(12, 20), np.arange(20, 26)]
    a = assess_site(prep, hop_sets=sets, detail="system")
    v = objective_values(a)
    assert v.weighted_sum == pytest.approx(a.weighted_collision, rel=1e-12)
    assert v.worst_system == pytest.approx(a.worst_collision, rel=1e-12) and v.worst_system_id == a.worst_system
    p = [s.priority_weight for s in prep.site.systems]
    assert v.residual_loss == pytest.approx(sum(w * f.residual_loss_probability for w, f in zip(p, a.systems)))
    assert [v.of(k) for k in OBJECTIVES] == [v.weighted_sum, v.worst_system, v.residual_loss, None]


@pytest.fixture(scope="module")
def plans():
    prep = prepare_site(load_site(fragile_site()))
    return {k: plan_for_objective(prep, requirements(objective=k), SolveSettings(), detail="system")
            for k in ("weighted_sum", "residual_loss")}


def test_residual_objective_trades_collision_for_residual_loss(plans):
    by_sum, by_residual = (objective_values(plans[k].assessment) for k in ("weighted_sum", "residual_loss"))
    # the fragile system's residual loss moves about a hundred times more per unit of collision than the
    # others': the plan protects it, at the price of more collision elsewhere
    assert by_residual.residual_loss < 0.5 * by_sum.residual_loss
    assert by_residual.weighted_sum > by_sum.weighted_sum
    fragile = [f.collision_probability for f in (plans[k].assessment.systems[0]
                                                 for k in ("weighted_sum", "residual_loss"))]
    assert fragile[1] < fragile[0]


def test_residual_answer_reports_its_rounds_and_figure(plans):
    r = plans["residual_loss"]
    report = r.report
    assert report.objective_kind == "residual_loss" and report.status in ("feasible", "no plan found in time")
    assert not r.violations and report.status == "feasible"  # never "optimal": no bound on residual loss
    assert report.evaluated_objective == pytest.approx(objective_values(r.assessment).residual_loss, rel=1e-12)
    assert report.linearisation_error >= 0
    rounds = report.work["objective_rounds"]
    assert rounds >= 2 or report.stopped_by_wall_clock
    assert any(n.startswith("objective residual_loss") for n in report.notes)
    assert r.sequences is not None and len(r.hop_sets) == 4
    assert [len(h) for h in r.hop_sets] == list(SIZES.values())


def test_linear_objectives_keep_one_round():
    prep = prepare_site(load_site(fragile_site()))
    r = plan_for_objective(prep, requirements(objective="weighted_sum", time_limit_s=0.5), SolveSettings(),
                           detail="system")
    assert "objective_rounds" not in r.report.work
    assert r.report.evaluated_objective == pytest.approx(objective_values(r.assessment).weighted_sum, rel=1e-12)


def test_independent_coordination_plans_one_round():
    prep = prepare_site(load_site(fragile_site()))
    req = requirements(objective="residual_loss", coordination="independent", time_limit_s=0.5)
    r = plan_for_objective(prep, req, SolveSettings(), detail="system")
    assert r.report.work["objective_rounds"] == 1
    assert math.isfinite(r.report.evaluated_objective)


CEILINGS = {"a": {"max_attempt_loss": 0.3}, "b": {"max_residual_loss": 1e-6}, "c": {"max_attempt_loss": 0.2}}


def ceiling_requirements(**kw) -> PlanRequirements:
    return PlanRequirements(systems=tuple(SystemRequirement(system=s, min_channels=n, max_channels=n,
                                                            **CEILINGS.get(s, {})) for s, n in SIZES.items()),
                            **{"time_limit_s": 2.0, **kw})


def test_ceiling_shares_take_the_larger_share_and_skip_systems_without_ceilings():
    nan = float("nan")
    shares = ceiling_shares(np.array([1e-3, 1e-3, 0.2, 0.0, 0.1]), np.array([0.2, 0.2, 0.3, 0.0, 0.1]),
                            (np.array([1e-2, nan, nan, 0.0, 0.0]), np.array([0.4, 0.1, nan, nan, nan])))
    assert shares[:2].tolist() == pytest.approx([0.5, 2.0])
    assert math.isnan(shares[2])
    assert shares[3:].tolist() == [0.0, 1.1]  # a zero ceiling: met, or missed (1 + loss, finite)


def test_margin_gradient_matches_a_difference_of_the_worst_share(prep):
    # for the worst system the smoothing factor is 1: its weight is the slope of its share of its binding
    # ceiling, checked against a central difference of that share evaluated directly (common practice)
    req = ceiling_requirements(objective="worst_margin")
    c = np.array([0.08, 0.02, 0.05, 0.03])
    g = margin_gradient(prep, req, c)
    s = prep.site.systems
    def shares(cc):
        resid = np.array([float(residual_of(cc[v], prep.fade_probability[v], x.hops_per_attempt, x.retry_limit))
                          for v, x in enumerate(s)])
        att = np.array([float(attempt_loss_of(cc[v], prep.fade_probability[v], x.hops_per_attempt))
                        for v, x in enumerate(s)])
        ceil = (np.array([np.nan, 1e-6, np.nan, np.nan]), np.array([0.3, np.nan, 0.2, np.nan]))
        return ceiling_shares(resid, att, ceil)
    worst = int(np.nanargmax(shares(c)))
    h = 1e-7
    up, down = c.copy(), c.copy()
    up[worst] += h
    down[worst] -= h
    assert g[worst] == pytest.approx((shares(up)[worst] - shares(down)[worst]) / (2 * h), rel=1e-5)
    assert g[3] == 0.0  # no ceiling
    assert all(0 < g[v] for v in (0, 1, 2))


def test_worst_margin_plan_widens_the_worst_margin():
    prep = prepare_site(load_site(fragile_site()))
    values = {}
    for k in ("weighted_sum", "worst_margin"):
        req = ceiling_requirements(objective=k)
        r = plan_for_objective(prep, req, SolveSettings(), detail="system")
        assert not r.violations
        values[k] = objective_values(r.assessment, req).worst_margin
    assert values["worst_margin"] < values["weighted_sum"] < 1.0
