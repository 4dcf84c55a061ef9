"""The column generation's compiled pricing (`planning.pricing_kernels`) against full enumeration.

The pricing problem is min b.y + 1/2 y'Qy over booleans with Q >= 0 off the diagonal, forbidden pairs and
forced booleans. Reference: the exhaustive minimum over every feasible y (2^n, n <= 12), the definition of the
problem; the branch and bound must reach it exactly (it is what makes the column generation's bound valid),
and the flip descent must end at a point no single feasible flip improves."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from cohop.planning import bound, pricing_kernels


def _problem(seed: int, n: int):
    rng = np.random.default_rng(seed)
    q = rng.uniform(0.0, 1.0, (n, n)) * (rng.uniform(size=(n, n)) < 0.5)
    q = np.triu(q, 1)
    q = q + q.T
    b = rng.uniform(-1.5, 0.5, n)
    forbidden = np.triu(rng.uniform(size=(n, n)) < 0.1, 1)
    forbidden = forbidden | forbidden.T
    forced = np.zeros(n, bool)
    forced[rng.integers(0, n)] = True
    forbidden[forced] = False
    forbidden[:, forced] = False
    return b, q, forbidden, forced


def _feasible(y, forbidden, forced) -> bool:
    return bool((y[forced] == 1).all() and not (np.outer(y, y) * forbidden).any())


def _brute_force(b, q, forbidden, forced) -> float:
    best = np.inf
    for bits in itertools.product((0.0, 1.0), repeat=b.size):
        y = np.array(bits)
        if _feasible(y, forbidden, forced):
            best = min(best, float(b @ y + 0.5 * y @ q @ y))
    return best


class _Stub(bound._Pricing):
    """A pricing problem given directly by its arrays (the constructor builds them from an instance)."""

    def __init__(self, forbidden, forced):
        self.forbidden, self.forced, self.work = forbidden, forced, 0


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(2, 12))
def test_branch_and_bound_reaches_the_enumerated_minimum(seed, n):
    b, q, forbidden, forced = _problem(seed, n)
    pricing = _Stub(forbidden, forced)
    lower, value, y = pricing._branch_and_bound(b, q, np.inf, node_limit=10**7)
    want = _brute_force(b, q, forbidden, forced)
    assert value == pytest.approx(want, abs=1e-12) and lower == value
    assert y is not None and _feasible(y, forbidden, forced)
    assert float(b @ y + 0.5 * y @ q @ y) == pytest.approx(value, abs=1e-12)
    assert pricing.work > 0


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(2, 12))
def test_a_node_limit_leaves_a_valid_root_bound(seed, n):
    b, q, forbidden, forced = _problem(seed, n)
    lower, value, _ = _Stub(forbidden, forced)._branch_and_bound(b, q, np.inf, node_limit=3)
    assert lower <= _brute_force(b, q, forbidden, forced) + 1e-12 <= value + 2e-12


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(2, 12))
def test_flip_descent_ends_where_no_single_feasible_flip_improves(seed, n):
    b, q, forbidden, forced = _problem(seed, n)
    y = forced.astype(float)
    steps = pricing_kernels.flip_descent(y, b, q, forbidden, forced)
    assert steps >= 1 and _feasible(y, forbidden, forced)
    value = float(b @ y + 0.5 * y @ q @ y)
    for k in range(n):
        if forced[k]:
            continue
        z = y.copy()
        z[k] = 1.0 - z[k]
        if _feasible(z, forbidden, forced):
            assert float(b @ z + 0.5 * z @ q @ z) >= value - 1e-12
