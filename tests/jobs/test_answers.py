"""The decisions an answer shows, each made once in cohop.jobs: the 15.247(h) caution, the compliance
status, the comparison with the baselines."""

from __future__ import annotations

import pytest

from cohop.cautions import CAUTIONS, COORDINATION_CAUTION, cautions_for
from cohop.jobs.answers import compliance_status, coordination_caution
from cohop.jobs.plan import compare
from cohop.planning.engine import BaselineResult
from cohop.regulatory import PROFILES
from cohop.regulatory.rules import FAIL, PASS, WARNING, Finding, Rule


class _Sequences:
    def __init__(self, aligned: bool):
        self.depends_on_alignment = aligned


US, EU = PROFILES["fcc15.247-902-928"], PROFILES["en300328-2400-2483.5-adaptive"]


@pytest.mark.parametrize("coordination, aligned, expected", [
    (None, False, True),  # an assessment of the request's own hop sets: they may be a joint assignment
    ("joint", False, True),
    ("joint", True, True),
    ("independent", False, False),  # each system only avoids what it measures
    ("independent", True, True),  # ... unless its sequences rely on slot alignment with others
])
def test_the_caution_policy_on_a_profile_that_calls_for_it(coordination, aligned, expected):
    assert coordination_caution(US, coordination, _Sequences(aligned)) is expected


@pytest.mark.parametrize("coordination", [None, "joint", "independent"])
def test_no_coordination_caution_where_the_profile_does_not_call_for_it(coordination):
    assert coordination_caution(EU, coordination, _Sequences(True)) is False


def test_a_plan_without_sequences_is_cautioned_by_its_coordination_alone():
    assert coordination_caution(US, "independent", None) is False
    assert coordination_caution(US, "joint", None) is True


def test_every_answer_carries_the_general_cautions():
    assert cautions_for(False) == list(CAUTIONS)
    assert cautions_for(True) == list(CAUTIONS) + [COORDINATION_CAUTION]


def _finding(status: str) -> Finding:
    return Finding(Rule("r", "t", "c", "common practice", "s"), status, "m")


@pytest.mark.parametrize("statuses, expected", [
    ((), PASS), ((PASS, PASS), PASS), ((PASS, WARNING), WARNING), ((WARNING, FAIL, PASS), FAIL),
])
def test_compliance_status_is_the_worst_finding(statuses, expected):
    assert compliance_status([_finding(s) for s in statuses]) == expected


def _baseline(name: str, objective: float | None) -> BaselineResult:
    return BaselineResult(name, None, None, [], objective)


def test_the_comparison_takes_the_best_baseline_that_was_built():
    c = compare(0.02, [_baseline("random", 0.08), _baseline("greedy", 0.04), _baseline("contiguous", None)])
    assert (c.best_baseline, c.best_baseline_objective, c.plan_objective) == ("greedy", 0.04, 0.02)
    assert c.ratio == pytest.approx(0.5)


def test_no_ratio_without_a_positive_baseline():
    assert compare(0.0, [_baseline("greedy", 0.0)]).ratio is None
    none = compare(0.01, [_baseline("greedy", None)])
    assert (none.best_baseline, none.best_baseline_objective, none.ratio) == (None, None, None)
