"""Helpers of the sequence analysis checked against independent references."""

import itertools

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from cohop.sequences.analysis import longest_true_run


def _groupby_longest(rows) -> int:
    # Reference: the standard library's itertools.groupby, run lengths of equal items.
    return max((sum(1 for _ in g) for row in rows for k, g in itertools.groupby(row.tolist()) if k), default=0)


@settings(max_examples=300, deadline=None)
@given(arrays(bool, st.tuples(st.integers(1, 6), st.integers(0, 40))))
def test_longest_true_run_matches_groupby(hits):
    assert longest_true_run(hits) == _groupby_longest(hits)


def test_longest_run_of_heads_grows_like_log2_n():
    # Schilling, "The longest run of heads", College Math. J. 21 (1990): for n fair flips the expected
    # longest run is about log2(n) - 2/3, with a standard deviation near 1.87 independent of n (from memory).
    rng = np.random.default_rng(5)
    n = 4096
    runs = [longest_true_run(rng.random(n) < 0.5) for _ in range(400)]
    assert abs(np.mean(runs) - (np.log2(n) - 2 / 3)) < 0.35
