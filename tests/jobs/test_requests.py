"""Requests are dataclasses with their defaults defined once: the loaders of cohop.jobs.requests (no HTTP
layer) and the request schemas build the same request and refuse the same ones at the same pointers."""

from __future__ import annotations

import copy

import marshmallow as ma
import pytest

from cohop import limits, samples
from cohop.api.problems import flatten_messages
from cohop.api.schemas.assessment import AssessmentRequestSchema
from cohop.api.schemas.plan import PlanRequestSchema
from cohop.api.schemas.replan import ReplanRequestSchema
from cohop.errors import SiteError
from cohop.jobs.requests import (AssessmentRequest, PlanRequest, PlanRequirements, ReplanMode,
                                 load_assessment_request, load_plan_request, load_replan_request)
from cohop.sequences.report import DEFAULT_PACKETS
from tests.problems import set_at


def _plan_body() -> dict:
    site = samples.load("water_works")["site"]
    return {"site": site, "baselines": ["greedy", "random", "greedy"], "detail": "system",
            "search": {"time_limit_s": 3.0, "seed": 4},
            "requirements": {"systems": [{"system": "dosing-link", "min_channels": 50, "excluded_channels": [3, 4],
                                          "pinned_channels": [7]}], "coordination": "independent"}}


def test_a_plan_request_loads_alike_both_ways():
    body = _plan_body()
    req = load_plan_request(copy.deepcopy(body))
    assert req == PlanRequestSchema().load(copy.deepcopy(body))
    assert req.requirements.baselines == ("greedy", "random")  # in order, once each
    assert req.requirements.systems[0].excluded_channels == (3, 4)


def test_defaults_are_the_dataclasses_both_ways():
    site = samples.load("water_works")["site"]
    loaded = load_plan_request({"site": copy.deepcopy(site)})
    assert loaded == PlanRequestSchema().load({"site": copy.deepcopy(site)})
    assert loaded == PlanRequest(site=loaded.site)
    assert loaded.requirements == PlanRequirements()
    assert loaded.requirements.sequence_packets == DEFAULT_PACKETS  # the assessment's sequence figures use it too
    assessment = load_assessment_request({"site": copy.deepcopy(site)})
    assert assessment == AssessmentRequestSchema().load({"site": copy.deepcopy(site)})
    assert assessment == AssessmentRequest(site=assessment.site)


def test_the_replan_sample_loads_alike_both_ways():
    body = samples.load("water_works_replan")
    req = load_replan_request(copy.deepcopy(body))
    assert req == ReplanRequestSchema().load(copy.deepcopy(body))
    assert req.mode == ReplanMode(kind="tolerance", tolerance=0.05)
    assert {c.system for c in req.current} == {s.id for s in req.site.systems}


def test_an_assessment_request_with_a_simulation_loads_alike_both_ways():
    body = samples.load("water_works")
    body.update(simulation={"trials_per_system": 1000}, detail="source")
    req = load_assessment_request(copy.deepcopy(body))
    assert req == AssessmentRequestSchema().load(copy.deepcopy(body))
    assert req.simulation.seed == 0


def _problems(load, schema, body) -> tuple[list, list]:
    try:
        load(copy.deepcopy(body))
        loader = []
    except SiteError as err:
        loader = sorted(err.problems)
    try:
        schema().load(copy.deepcopy(body))
        by_schema = []
    except ma.ValidationError as err:
        by_schema = sorted((e["pointer"], e["detail"]) for e in flatten_messages(err.messages))
    return loader, by_schema


def _requirement(**fields):
    return set_at(("requirements", "systems", 0), {"system": "dosing-link", **fields})


def _many_hops(body):
    """10^6 packets of 6 hops (5 retries) each: above the cap on simulated hops per system."""
    body["site"]["systems"][1]["retry_limit"] = 5
    body["search"]["sequence_packets"] = limits.SEQUENCE_PACKETS.maximum
    assert 6 * limits.SEQUENCE_PACKETS.maximum > limits.MAX_SIMULATED_HOPS


# (case, mutation of the plan body, pointer both ways)
PLAN_RULES = [
    ("unknown-system", _requirement(system="ghost"), "/requirements/systems/0/system"),
    ("excluded-off-grid", _requirement(excluded_channels=[129]), "/requirements/systems/0/excluded_channels/0"),
    ("pinned-and-excluded", _requirement(excluded_channels=[3], pinned_channels=[3]),
     "/requirements/systems/0/pinned_channels"),
    ("max-below-min", _requirement(min_channels=50, max_channels=20), "/requirements/systems/0/max_channels"),
    ("excluded-repeat", _requirement(excluded_channels=[3, 3]), "/requirements/systems/0/excluded_channels"),
    ("two-entries", lambda body: body["requirements"]["systems"].append({"system": "dosing-link"}),
     "/requirements/systems"),
    ("too-many-simulated-hops", _many_hops, "/search/sequence_packets"),
]


@pytest.mark.parametrize("case, mutate, where", PLAN_RULES, ids=[r[0] for r in PLAN_RULES])
def test_each_plan_rule_refuses_the_same_way_both_ways(case, mutate, where):
    body = _plan_body()
    mutate(body)
    loader, by_schema = _problems(load_plan_request, PlanRequestSchema, body)
    assert where in [p for p, _ in loader], loader
    assert loader == by_schema


def _current(i, **fields):
    def mutate(body):
        body["current"]["systems"][i].update(fields)
    return mutate


REPLAN_RULES = [
    ("budget-without-max-changes", set_at(("mode",), {"kind": "budget"}), "/mode/max_changes"),
    ("duplicate-current-system", _current(1, system="scada-backbone"), "/current/systems/1/system"),
    ("current-channel-off-grid", _current(0, hop_set=[1, 200], sequence=None), "/current/systems/0/hop_set/1"),
    ("current-sequence-off-hop-set", _current(0, hop_set=[1, 2], sequence=[1, 3]), "/current/systems/0/sequence"),
    ("current-hop-set-repeats", _current(0, hop_set=[1, 1], sequence=None), "/current/systems/0/hop_set"),
    ("requirement-unknown-system", set_at(("requirements",), {"systems": [{"system": "ghost"}]}),
     "/requirements/systems/0/system"),
]


@pytest.mark.parametrize("case, mutate, where", REPLAN_RULES, ids=[r[0] for r in REPLAN_RULES])
def test_each_replan_rule_refuses_the_same_way_both_ways(case, mutate, where):
    body = samples.load("water_works_replan")
    mutate(body)
    loader, by_schema = _problems(load_replan_request, ReplanRequestSchema, body)
    assert where in [p for p, _ in loader], loader
    assert loader == by_schema


def test_site_problems_point_into_the_request():
    body = _plan_body()
    body["site"]["systems"][0]["packet_airtime_s"] = 0.05
    with pytest.raises(SiteError) as err:
        load_plan_request(body)
    assert [p for p, _ in err.value.problems] == ["/site/systems/0/packet_airtime_s"]
