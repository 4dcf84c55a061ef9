"""Every error the service raises crosses a process boundary intact (plans run in a solver process)."""

from __future__ import annotations

import pickle

import pytest

from cohop import errors
from cohop.errors import Conflict, DomainError, PlanInfeasible, SiteError, SolveAbandoned, SolverBusy, SolverCrashed

EXAMPLES = [
    SiteError([("/site/x", "bad"), ("/site/y", "worse")]),
    PlanInfeasible([Conflict("channel count", ("a", "b"), "too few channels", "47 CFR 15.247(a)(1)", ((0, 4),),
                             "relax it")], proven=False),
    SolverBusy(1),
    SolverCrashed(-9),
    SolveAbandoned(0.5),
]


def test_every_error_class_has_an_example():
    assert {type(e) for e in EXAMPLES} == set(errors.ALL)


@pytest.mark.parametrize("err", EXAMPLES, ids=lambda e: type(e).__name__)
def test_errors_round_trip_through_pickle(err):
    back = pickle.loads(pickle.dumps(err))
    assert type(back) is type(err)
    assert isinstance(back, DomainError)
    assert str(back) == str(err)
    assert vars(back) == vars(err)


def test_site_error_under_prefixes_every_pointer():
    assert SiteError([("/x", "m")]).under("/site").problems == [("/site/x", "m")]
