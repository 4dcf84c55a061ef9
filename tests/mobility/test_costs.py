"""A plan leaves time for the moving systems' per-position figures: the reserve counts their positions."""

from __future__ import annotations

import copy

import pytest

from cohop.planning import costs
from cohop.planning.instance import build_instance
from cohop.planning.requirements import PlanRequirements
from cohop.prepare import prepare_site
from cohop.site_rules import load_site
from tests.api.conftest import load_sample


def _instance(site_body):
    return build_instance(prepare_site(load_site(site_body)), PlanRequirements())


def test_reserve_grows_with_the_moving_positions_only():
    moving = load_sample("container_terminal.json")["site"]
    fixed = copy.deepcopy(moving)
    crane = fixed["systems"][0]
    crane["position"] = crane.pop("positions")[2]
    longer = copy.deepcopy(moving)
    longer["systems"][0]["positions"] += [{"x_m": 150.0 + 10 * i, "y_m": 20.0} for i in range(5)]  # 10 in all
    assert costs.mobility_s(_instance(fixed)) == 0.0
    five, ten = costs.mobility_s(_instance(moving)), costs.mobility_s(_instance(longer))
    assert five > 0 and ten == pytest.approx(2 * five)
    inst = _instance(moving)
    share = costs.assessment_s(inst.n_systems, int(inst.sizes.sum())) / inst.n_systems
    assert five == pytest.approx(5 * costs.MOBILITY_PER_POSITION_FACTOR * share)
    # the closing phases' reserve holds it (times the safety factor)
    assert (costs.after_search_s(inst, "channel", None) - costs.after_search_s(_instance(fixed), "channel", None)
            == pytest.approx(costs.SAFETY * five))
