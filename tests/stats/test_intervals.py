"""Wilson intervals against SciPy's and against published worked values."""

import pytest
from scipy.stats import binomtest

from cohop.stats.intervals import Z95, wilson_interval, z_for


@pytest.mark.parametrize("hits, trials", [(0, 1), (1, 1), (0, 100), (100, 100), (10, 100), (3, 1_000_000),
                                          (499_999, 1_000_000), (7, 13), (1, 5000)])
@pytest.mark.parametrize("confidence", [0.9, 0.95, 0.999])
def test_closed_form_matches_scipy(hits, trials, confidence):
    # Reference: scipy.stats.binomtest(k, n).proportion_ci(method="wilson") (Wilson 1927, without continuity
    # correction).
    ci = binomtest(hits, trials).proportion_ci(confidence_level=confidence, method="wilson")
    lo, hi = wilson_interval(hits, trials, z_for(confidence))
    assert lo == pytest.approx(ci.low, abs=1e-12) and hi == pytest.approx(ci.high, abs=1e-12)


def test_worked_values_and_exact_ends():
    # Agresti and Coull (1998): 10 of 100 at 95 % is [0.0552, 0.1744]; z(0.95) = 1.959964 (normal tables).
    assert Z95 == pytest.approx(1.959964, abs=1e-6)
    lo, hi = wilson_interval(10, 100)
    assert lo == pytest.approx(0.0552, abs=5e-4) and hi == pytest.approx(0.1744, abs=5e-4)
    assert wilson_interval(0, 50)[0] == 0.0 and wilson_interval(50, 50)[1] == 1.0
    assert wilson_interval(0, 0) == (0.0, 1.0)
