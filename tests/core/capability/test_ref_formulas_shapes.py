"""Capability formulas: one-sided bounds for many samples at once, the exact scale of the ppm, and the
observed fallout of a single reading.  Written against the survivors of test_ref_formulas_edges.py
(tests/MUTATION.md)."""
import numpy as np
import pytest
from scipy import stats

from workbench.core.capability import formulas as F


def test_lower_bounds_for_arrays_keep_one_upper_end_per_sample():
    """Given arrays (simulations call the interval functions once for many samples) a lower bound comes with
    +∞ as the upper end of each sample.  Kills ``np.full_like(None, inf)`` for the upper ends (one value
    for all) in the Cp, Bissell and Boyles lower bounds."""
    cps, ns = np.array([1.0, 1.5, 2.0]), np.array([20, 30, 50])
    for low, high in (F.cp_chi2_interval(cps, ns, bounds="lower"), F.bissell_interval(cps, ns, bounds="lower"),
                      F.boyles_cpm_interval(cps, ns, np.zeros(3), bounds="lower")):
        assert np.shape(low) == (3,) and np.shape(high) == (3,) and np.all(np.isinf(high))


@pytest.mark.parametrize("c", [0.5, 1.0, 1.33])
def test_ppm_is_one_million_times_the_tail(c):
    """1e6·Φ(−3C) exactly [definition; scipy.stats.norm as the reference].  Kills the factor 1000001."""
    assert F.ppm_from_index(c) == pytest.approx(1e6 * stats.norm.sf(3 * c), rel=1e-12)


def test_one_reading_outside_is_all_of_the_observed_fallout():
    """One reading above the USL out of one: 1,000,000 ppm [definition].  Kills ``max(size, 2)``."""
    one = F.observed_fallout(np.array([25.0]), 8.0, 20.0)
    assert (one.below, one.above, one.total) == (0.0, 1e6, 1e6)
