"""The hostile corpus against the in-process app with production isolation (solves in their own process).

Each case's time is recorded (`record_property`), never asserted; bench/hostile.py prints them.
"""

from __future__ import annotations

import pytest

from cohop.api.app import create_app
from tests.hostile import verdict
from tests.hostile.corpus import CASES, Case

RUNNER = "app"


def params(runner: str):
    """The corpus cases this runner sends, with the xfail marks of cases another helper's work fixes."""
    out = []
    for case in CASES:
        if runner not in case.where:
            continue
        marks = []
        if runner in case.owners:
            marks.append(pytest.mark.xfail(strict=False, run=case.run, reason=case.owners[runner]))
        out.append(pytest.param(case, id=case.name, marks=marks))
    return out


@pytest.fixture(scope="module")
def client():
    app = create_app({"TESTING": True, "COHOP_ISOLATE_SOLVES": True, "COHOP_MAX_SOLVE_S": 2})
    return app.test_client()


def test_the_corpus_is_large_and_names_are_unique():
    assert len(CASES) >= 60
    assert len({c.name for c in CASES}) == len(CASES)
    assert all(c.run or c.owners for c in CASES)  # a case left unsent says whose work will let it run


@pytest.mark.parametrize("case", params(RUNNER))
def test_case_answers_4xx_problem_or_strict_json(client, case: Case, record_property):
    out = verdict.in_process(client, case)
    record_property("seconds", round(out.seconds, 3))
    verdict.judge(case, out)
    assert client.get("/v1/health").status_code == 200
