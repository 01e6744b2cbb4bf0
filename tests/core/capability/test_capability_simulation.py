"""Coverage of the confidence bounds on simulated normal processes (seeded, vectorised)."""
from __future__ import annotations

import numpy as np
import pytest

from workbench.core.capability.formulas import bissell_interval, boyles_cpm_interval, cp_chi2_interval

REPS, N = 2000, 50
LSL, USL, MU, SIGMA, TARGET = 0.0, 12.0, 7.0, 1.25, 6.0
TRUE_CP = (USL - LSL) / (6 * SIGMA)
TRUE_CPK = min(USL - MU, MU - LSL) / (3 * SIGMA)
TRUE_CPM = (USL - LSL) / (6 * np.sqrt(SIGMA ** 2 + (MU - TARGET) ** 2))
# tolerance: 4 binomial standard errors of a 95% coverage over 2000 repetitions (0.0195)
TOL = 4 * np.sqrt(0.95 * 0.05 / REPS)


@pytest.fixture(scope="module")
def samples():
    x = np.random.default_rng(40).normal(MU, SIGMA, size=(REPS, N))
    return x.mean(axis=1), x.std(axis=1, ddof=1)


def test_bissell_cpk_interval_covers_about_95_percent(samples):
    # Bissell (1990) is a normal approximation, so coverage is near, not exactly, 95%
    m, s = samples
    cpk = np.minimum(USL - m, m - LSL) / (3 * s)
    lo, hi = bissell_interval(cpk, N, 0.95)
    coverage = np.mean((lo <= TRUE_CPK) & (TRUE_CPK <= hi))
    assert abs(coverage - 0.95) < TOL


def test_bissell_lower_bound_covers_about_95_percent(samples):
    m, s = samples
    cpk = np.minimum(USL - m, m - LSL) / (3 * s)
    lo, _ = bissell_interval(cpk, N, 0.95, "lower")
    assert abs(np.mean(lo <= TRUE_CPK) - 0.95) < TOL


def test_chi_square_cp_interval_covers_95_percent(samples):
    # exact for the sample SD of normal data (chi-square distribution of (n-1)s^2/sigma^2)
    _, s = samples
    lo, hi = cp_chi2_interval((USL - LSL) / (6 * s), N, 0.95)
    assert abs(np.mean((lo <= TRUE_CP) & (TRUE_CP <= hi)) - 0.95) < TOL


def test_boyles_cpm_interval_covers_about_95_percent(samples):
    # Boyles (1991) chi-square approximation with nu = n (1 + xi^2)^2 / (1 + 2 xi^2)
    m, s = samples
    cpm = (USL - LSL) / (6 * np.sqrt(s ** 2 + (m - TARGET) ** 2))
    lo, hi = boyles_cpm_interval(cpm, N, (m - TARGET) / s, 0.95)
    assert abs(np.mean((lo <= TRUE_CPM) & (TRUE_CPM <= hi)) - 0.95) < TOL
