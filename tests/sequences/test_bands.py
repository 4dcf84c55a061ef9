"""Soft harm by bands of offsets (cohop.sequences.bands) against its definitions: brute-force enumeration of
the subsets, the harm tables themselves, and the threshold form with fading "none"."""

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cohop.prepare import prepare_site
from cohop.sequences import bands
from cohop.stats.overlap import survival_distinct
from tests import sites


def _subsets_by_enumeration(keep, k):
    """Definition (cohop.stats.overlap, distinct channels): K = q N + m dwells cover every position q times and a
    uniformly drawn m-subset of distinct positions once; the hop survives each dwell with its keep."""
    q, m = divmod(k, keep.size)
    return np.prod(keep) ** q * np.mean([np.prod(keep[list(c)]) for c in itertools.combinations(range(keep.size), m)])


@settings(max_examples=200, deadline=None)
@given(st.lists(st.integers(-1, 3), min_size=1, max_size=9), st.lists(st.floats(0.0, 1.0), min_size=4, max_size=4),
       st.integers(0, 25), st.floats(0.0, 1.0))
def test_distinct_positions_of_several_bands_match_enumerating_the_subsets(labels, hit, k0, r):
    labels, hit = np.array(labels), np.array(hit)
    counts = np.array([(labels == g).sum() for g in range(4)])
    keep = np.where(labels >= 0, 1.0 - hit[np.maximum(labels, 0)], 1.0)  # label -1: a position without harm
    want = (1 - r) * _subsets_by_enumeration(keep, k0) + r * _subsets_by_enumeration(keep, k0 + 1)
    got = bands.subset_survival([k0], [r], counts[None], hit[None], [labels.size])[0]
    assert got == pytest.approx(want, rel=1e-10, abs=1e-12)


def test_one_band_is_the_hypergeometric_form_exactly():
    # rho 1 in one band (fading "none"): cohop.stats.overlap.survival_distinct with the activity, bit for bit
    rng = np.random.default_rng(3)
    k0, r = rng.integers(0, 40, 50), rng.random(50)
    n = rng.integers(1, 30, 50)
    h = rng.integers(0, 30, 50) % (n + 1)
    alpha = rng.random(50)
    counts = np.stack([h, np.zeros(50, dtype=int)], axis=1)
    hit = np.stack([alpha, np.full(50, 0.3)], axis=1)
    assert bands.subset_survival(k0, r, counts, hit, n).tolist() == survival_distinct(k0, r, h, n, alpha).tolist()


def test_bands_are_the_runs_of_the_harm_tables():
    # 3 dB over the capture threshold co-channel, Bluetooth-like rejection 11/41/51 dB (tests.sites), Rayleigh
    # wanted signal, steady link: rho = 1 - exp(-10^(E/10)) (cohop.physics.capture [2]) = 0.864 co-channel,
    # 0.147 at 1 MHz (E = -8 dB), below the 1e-3 floor at 2 MHz (E = -38 dB). The threshold window is 0.
    prep = prepare_site(sites.load(sites.site([sites.system("a", range(10)), sites.system("b", range(10))],
                                              coupling_loss_db=68.0, n_channels=10)))
    b = bands.system_bands(prep, 0, [1])
    assert b.widths.tolist() == [[0, 1]] and prep.window[0, 1] == 0
    assert b.harm[0].tolist() == pytest.approx([1 - np.exp(-10**0.3), 1 - np.exp(-10**-0.8)], rel=1e-12)
    assert b.reach.tolist() == [prep.harm.reach[0, 1]]
    rho = prep.harm.system_harm(0, np.arange(10))[1]
    for d in range(10):  # each offset's harm is its band's
        g = np.searchsorted(b.widths[0], d)
        assert rho[d] == (b.harm[0, g] if g < b.count else 0.0)


@pytest.mark.parametrize("loss", [40.0, 55.0, 68.0, 90.0])
def test_fading_none_gives_one_band_of_harm_one_out_to_the_window(loss):
    none = {"model": "none"}
    prep = prepare_site(sites.load(sites.site([sites.system("a", range(30), fading=none),
                                               sites.system("b", range(30), fading=none)],
                                              coupling_loss_db=loss, n_channels=30)))
    b = bands.system_bands(prep, 0, [1])
    w = prep.window[0, 1]
    assert b.count == 1 and b.widths[0, 0] == min(w, 29)
    assert b.harm[0, 0] == (1.0 if w >= 0 else 0.0)


def test_a_row_whose_harm_dips_keeps_a_band_of_no_harm():
    b = bands.bands_of(np.array([[0.5, 0.5, 0.0, 0.2, 0.0, 0.0], [0.0] * 6, [0.9, 0.1, 0.1, 0.1, 0.1, 0.1]]))
    assert b.widths.tolist() == [[1, 2, 3], [-1, -1, -1], [0, 5, 5]]
    assert b.harm.tolist() == [[0.5, 0.0, 0.2], [0.0, 0.0, 0.0], [0.9, 0.1, 0.0]]
    within = np.array([[2, 3, 4], [0, 0, 0], [1, 6, 6]]).T  # counts within each width, one offset each
    assert bands.per_band(within).T.tolist() == [[2, 1, 1], [0, 0, 0], [1, 5, 0]]
