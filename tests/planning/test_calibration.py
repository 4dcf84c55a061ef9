"""The machine's work speed (cohop.planning.calibration) and how it scales the search's work budget."""

import pytest

from cohop.config import ConfigError, Settings
from cohop.deadline import Deadline
from cohop.planning import calibration
from cohop.planning.engine import WORK_MARGIN, search_budget
from cohop.planning.instance import build_instance
from cohop.planning.requirements import PlanRequirements
from cohop.prepare import prepare_site
from cohop.site_rules import load_site
from cohop import samples


@pytest.mark.parametrize("raw, want", [(0.3, 1.0), (1.0, 1.0), (1.24, 1.0), (1.26, 1.25), (2.37, 2.25),
                                       (2.99, 2.75), (7.0, 3.0), (float("inf"), 3.0)])
def test_quantised_floor_and_bounds(raw, want):
    assert calibration.quantised(raw) == want


def test_setting_fixes_the_figure_and_zero_measures():
    calibration.pin(None)
    try:
        assert calibration.speed(1.5) == 1.5  # no measurement needed
        measured = calibration.speed(0.0)  # the real probes, once
        assert 1.0 <= measured <= calibration.MAX_SPEED
        assert measured / calibration.SPEED_STEP == int(measured / calibration.SPEED_STEP)
        assert calibration.speed(0.0) == measured  # measured once per process
    finally:
        calibration.pin(1.0)


def test_the_work_budget_scales_with_the_speed():
    inst = build_instance(prepare_site(load_site(samples.load("water_works")["site"])), PlanRequirements())
    slow = search_budget(Deadline.of(10.0, 60.0, work_speed=1.0), inst, 1.0)
    fast = search_budget(Deadline.of(10.0, 60.0, work_speed=2.5), inst, 1.0)
    assert fast.seconds == pytest.approx(2.5 * slow.seconds) and slow.seconds <= WORK_MARGIN * 10.0
    assert fast.end == pytest.approx(slow.end, abs=0.05)  # the wall-clock window is the same


def test_setting_is_validated():
    with pytest.raises(ConfigError):
        Settings(work_speed=-1.0)


def test_a_search_without_cp_sat_counts_its_budget_at_the_local_search_figure():
    """CP-SAT's probe binds only a search that runs CP-SAT: above max_products (the planner skips the full model)
    the budget follows the local-search probe's figure; the re-plan (no cap given) keeps the slower one."""
    inst = build_instance(prepare_site(load_site(samples.load("water_works")["site"])), PlanRequirements())
    deadline = Deadline.of(10.0, 60.0, work_speed=1.5)
    deadline.speed_without_cp_sat = 3.0
    runs_cp_sat = search_budget(deadline, inst, 1.0, max_products=10**9)
    skips_cp_sat = search_budget(deadline, inst, 1.0, max_products=0)
    replan = search_budget(deadline, inst, 1.0)
    assert skips_cp_sat.seconds == pytest.approx(2.0 * runs_cp_sat.seconds)
    assert replan.seconds == pytest.approx(runs_cp_sat.seconds)
    assert skips_cp_sat.end == pytest.approx(runs_cp_sat.end, abs=0.05)
    assert (skips_cp_sat.speed, runs_cp_sat.speed, replan.speed) == (3.0, 1.5, 1.5)  # what the phases' rates scale by
    assert all(part.speed == 3.0 for part in skips_cp_sat.split([0.5, 0.5]))


def test_the_figure_without_cp_sat_is_never_below_the_figure_for_every_phase():
    calibration.pin(None)
    try:
        assert calibration.speed_without_cp_sat(2.0) == 2.0  # a setting fixes both
        assert calibration.speed_without_cp_sat(0.0) >= calibration.speed(0.0)
    finally:
        calibration.pin(1.0)
