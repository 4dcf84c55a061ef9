"""Plans and re-plans through the isolation the production server uses: each solve in its own process.

Errors must cross the process boundary as themselves: a plan that cannot be met is a 422 with its
conflicts (and the client's NoFeasiblePlan), a site that cannot be evaluated a 422 with pointers, never a
500. A killed solver is tested in tests/production/test_faults.py.
"""

from __future__ import annotations

import pytest

from cohop.api.app import create_app
from cohop.embedded import EMBEDDED_URL, embedded_session
from cohop_client import Client, NoFeasiblePlan
from tests.replan_api.conftest import REPLANS, check_replan, replan_request

from .conftest import INFEASIBLE, PLANS, assert_problem, check_plan, plan_ok, post_plan, requirement, small_request

SITE = "urn:cohop:problem:site-not-evaluable"


@pytest.fixture(scope="module")
def isolated():
    return create_app({"TESTING": True, "COHOP_ISOLATE_SOLVES": True})


@pytest.fixture(scope="module")
def http(isolated):
    return isolated.test_client()


def test_a_plan_crosses_the_process_boundary(http):
    body = small_request(baselines=["greedy"])
    answer = plan_ok(http, body)
    check_plan(body, answer)
    s = answer["solver"]
    assert s["time_limit_s"] == s["requested_time_limit_s"] == body["search"]["time_limit_s"]
    assert s["stopped_by_wall_clock"] == any("wall clock stopped" in n for n in s["notes"])


def test_a_replan_crosses_the_process_boundary(http):
    body = replan_request()
    resp = http.post(REPLANS, json=body)
    assert resp.status_code == 200, resp.get_data(as_text=True)[:2000]
    check_replan(body, resp.get_json())


def test_an_infeasible_plan_is_422_with_its_conflicts(http):
    body = small_request()
    requirement(body, "a").update(min_channels=40, max_channels=40)  # 40 channels on a 30-channel grid
    problem = assert_problem(post_plan(http, body), 422, INFEASIBLE)
    assert problem["proven"] is True
    assert any(c["requirement"] == "channel count" and c["systems"] == ["a"] for c in problem["conflicts"])


def test_the_client_raises_no_feasible_plan_through_isolation(isolated):
    body = small_request()
    requirement(body, "a").update(min_channels=40, max_channels=40)
    with Client(EMBEDDED_URL, session=embedded_session(isolated)) as api:
        with pytest.raises(NoFeasiblePlan) as err:
            api.plan(body["site"], requirements=body["requirements"], search=body["search"])
    assert err.value.status == 422 and err.value.problem["conflicts"]


def test_a_site_error_in_the_solver_process_is_422_with_pointers(http):
    body = small_request()
    site = body["site"]
    site["coupling"]["entries"].pop()  # the last pair (c, d) from positions, with a model that has no N here:
    site["coupling"]["propagation"] = {"model": "p1238", "environment": "office"}  # P.1238 has no 2.4 GHz row
    for sid, x in (("c", 0.0), ("d", 30.0)):
        next(s for s in site["systems"] if s["id"] == sid)["position"] = {"x_m": x, "y_m": 0.0}
    problem = assert_problem(post_plan(http, body), 422, SITE)  # found by prepare, in the solver process
    assert [e["pointer"] for e in problem["errors"]] == ["/site/coupling/propagation"]
    assert "power_loss_coefficient" in problem["errors"][0]["detail"]
    assert problem["instance"] == PLANS


@pytest.mark.parametrize("name", ["water_works", "container_terminal", "open_pit_mine"])
def test_every_sample_plans_through_isolation_at_five_seconds(http, name):
    """Each sample planned as the production server runs it, with a time limit long enough for every phase
    (CP-SAT with the Lagrangian floor included): the open-pit sample's abort inside OR-Tools surfaced only
    at 5 s and more (bench_timelimits), as a 500."""
    from cohop import samples

    body = {"site": samples.load(name)["site"], "search": {"time_limit_s": 5, "seed": 1}}
    answer = plan_ok(http, body)
    check_plan(body, answer)
