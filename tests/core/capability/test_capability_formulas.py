"""Capability formulas against published worked examples and their defining formulas."""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from workbench.core.capability.formulas import (bissell_interval, boyles_cpm_interval, centring_k,
                                                cp_chi2_interval, cpm_index, normal_fallout,
                                                normal_indices, observed_fallout, percentile_indices,
                                                ppm_from_index)


def test_nist_handbook_capability_example():
    # NIST/SEMATECH e-Handbook, section 6.1.6 [from memory; arithmetic exact]:
    # USL 20, LSL 8, mean 16, sigma 2 -> Cp 1.0, Cpu 0.6667, Cpl 1.3333, Cpk 0.6667
    ix = normal_indices(16.0, 2.0, 8.0, 20.0)
    assert ix.potential == pytest.approx(1.0, abs=1e-4)
    assert ix.upper == pytest.approx(0.6667, abs=1e-4)
    assert ix.lower == pytest.approx(1.3333, abs=1e-4)
    assert ix.worst == pytest.approx(0.6667, abs=1e-4)


def test_one_sided_spec_gives_only_its_side():
    # Kane (1986) definitions [definition]: without an LSL there is no Cp and no Cpl
    upper_only = normal_indices(16.0, 2.0, None, 20.0)
    assert upper_only.potential is None and upper_only.lower is None
    assert upper_only.upper == pytest.approx(4.0 / 6.0, abs=1e-12)
    assert upper_only.worst == upper_only.upper
    lower_only = normal_indices(16.0, 2.0, 8.0, None)
    assert lower_only.potential is None and lower_only.upper is None
    assert lower_only.worst == pytest.approx(8.0 / 6.0, abs=1e-12)


@pytest.mark.parametrize("sigma", [0.0, None, float("nan"), -1.0])
def test_undefined_sigma_gives_no_indices(sigma):
    # definition: the indices divide by sigma, so sigma <= 0 leaves them undefined (None, never NaN)
    ix = normal_indices(16.0, sigma, 8.0, 20.0)
    assert (ix.potential, ix.lower, ix.upper, ix.worst) == (None, None, None, None)
    assert normal_fallout(16.0, sigma, 8.0, 20.0) is None


@pytest.mark.parametrize("cpk, n, low, high", [
    # Bissell (1990) worked case, printed in a trade article [printed; exact 0.8907 ... 1.4093]
    (1.15, 45, 0.8907, 1.4093),
    # Montgomery's example Cpk 1.33, n 20 -> 0.88 ... 1.78 [from memory; arithmetic exact]
    (1.33, 20, 0.88, 1.78),
])
def test_bissell_published_intervals(cpk, n, low, high):
    lo, hi = bissell_interval(cpk, n, 0.95)
    tol = 1e-4 if low == 0.8907 else 5e-3  # 4-dp and 2-dp published figures
    assert lo == pytest.approx(low, abs=tol)
    assert hi == pytest.approx(high, abs=tol)


def test_bissell_matches_published_form_and_lower_bound_uses_one_sided_z():
    # Bissell (1990) [definition]: Cpk [1 - z sqrt(1/(9 n Cpk^2) + 1/(2(n-1)))] with z = z_{1-alpha}
    cpk, n = 1.5, 60
    z = stats.norm.ppf(0.95)
    expected = cpk * (1 - z * math.sqrt(1 / (9 * n * cpk ** 2) + 1 / (2 * (n - 1))))
    lo, hi = bissell_interval(cpk, n, 0.95, "lower")
    assert lo == pytest.approx(expected, abs=1e-12)
    assert math.isinf(hi)


def test_chi_square_cp_interval_montgomery_example():
    # Montgomery, Introduction to SQC: USL 62, LSL 38, n 20, s 1.75 -> Cp 2.29, 95% CI 1.57 ... 3.01
    # [from memory; arithmetic exact]; the book rounds Cp to 2.29 before computing the bounds
    cp = normal_indices(50.0, 1.75, 38.0, 62.0).potential
    assert cp == pytest.approx(2.29, abs=5e-3)
    lo, hi = cp_chi2_interval(round(cp, 2), 20, 0.95)
    assert lo == pytest.approx(1.57, abs=5e-3)
    assert hi == pytest.approx(3.01, abs=5e-3)


def test_chi_square_lower_bound_definition():
    # chi-square interval [definition]: one-sided lower bound Cp sqrt(chi2_{alpha, n-1}/(n-1))
    lo, hi = cp_chi2_interval(1.4, 30, 0.90, "lower")
    assert lo == pytest.approx(1.4 * math.sqrt(stats.chi2.ppf(0.10, 29) / 29), abs=1e-12)
    assert math.isinf(hi)


def test_boyles_reduces_to_chi_square_with_n_df_on_target():
    # Boyles (1991) [definition]: nu = n (1 + xi^2)^2 / (1 + 2 xi^2) = n when the mean is on target
    lo, hi = boyles_cpm_interval(1.2, 40, 0.0, 0.95)
    assert lo == pytest.approx(1.2 * math.sqrt(stats.chi2.ppf(0.025, 40) / 40), abs=1e-12)
    assert hi == pytest.approx(1.2 * math.sqrt(stats.chi2.ppf(0.975, 40) / 40), abs=1e-12)
    xi = 0.8
    nu = 40 * (1 + xi ** 2) ** 2 / (1 + 2 * xi ** 2)
    lo2, _ = boyles_cpm_interval(1.2, 40, xi, 0.95)
    assert lo2 == pytest.approx(1.2 * math.sqrt(stats.chi2.ppf(0.025, nu) / nu), abs=1e-12)


@pytest.mark.parametrize("c, ppm", [
    # Normal fallout 1e6 Phi(-3C) [definition], figures as listed in REFERENCES.md
    (1.00, 1349.9), (1.33, 33.0), (1.50, 3.40), (2.00, 0.00099),
])
def test_normal_fallout_table(c, ppm):
    assert ppm_from_index(c) == pytest.approx(ppm, rel=5e-3)
    # the same figure from the model: a one-sided spec 3C sigma away from the mean
    f = normal_fallout(0.0, 1.0, None, 3.0 * c)
    assert f.above == pytest.approx(ppm, rel=5e-3) and f.below is None


def test_centred_cp_one_total_fallout():
    # definition: centred process with Cp = 1.00 -> 2699.8 ppm in total
    f = normal_fallout(0.0, 1.0, -3.0, 3.0)
    assert f.total == pytest.approx(2699.8, abs=0.05)
    assert f.below == pytest.approx(f.above, rel=1e-12)


def test_observed_fallout_counts_strictly_outside():
    # definition: a reading on a limit is inside the specification
    x = np.array([7.9, 8.0, 10.0, 20.0, 20.1, 25.0, 12.0, 13.0, 14.0, 15.0])
    f = observed_fallout(x, 8.0, 20.0)
    assert (f.below, f.above, f.total) == (1e5, 2e5, 3e5)


def test_percentile_indices_on_normal_quantiles_equal_normal_indices():
    # ISO 22514-2 percentile method [definition]: for a normal model X0.135 = mu - 3 sigma,
    # X50 = mu, X99.865 = mu + 3 sigma, so the percentile indices equal the normal ones
    mu, sigma = 16.0, 2.0
    q = stats.norm.ppf([stats.norm.cdf(-3), 0.5, stats.norm.cdf(3)], mu, sigma)
    a, b = percentile_indices(*q, 8.0, 20.0), normal_indices(mu, sigma, 8.0, 20.0)
    for u, v in zip((a.potential, a.lower, a.upper, a.worst), (b.potential, b.lower, b.upper, b.worst)):
        assert u == pytest.approx(v, abs=1e-9)


@settings(max_examples=60, deadline=None)
@given(mean=st.floats(-5, 5), sigma=st.floats(0.05, 5), target=st.floats(-1, 1))
def test_index_identities(mean, sigma, target):
    # Kane (1986) [definition]: Cpk = Cp (1 - k); Cpk <= Cp;
    # Cpm = Cp / sqrt(1 + ((mean - T)/sigma)^2) (Chan, Cheng & Spiring 1988) [definition]
    lsl, usl = -1.0, 1.0
    ix = normal_indices(mean, sigma, lsl, usl)
    k = centring_k(mean, lsl, usl)
    assert ix.worst == pytest.approx(ix.potential * (1 - k), abs=1e-9)
    assert ix.worst <= ix.potential + 1e-12
    cpm = cpm_index(mean, sigma, target, lsl, usl)
    assert cpm == pytest.approx(ix.potential / math.sqrt(1 + ((mean - target) / sigma) ** 2), rel=1e-9)


@settings(max_examples=60, deadline=None)
@given(value=st.floats(-2, 4), n=st.integers(5, 500), conf=st.floats(0.5, 0.999))
def test_intervals_bracket_the_estimate(value, n, conf):
    # invariant of every interval: low <= estimate <= high, and a lower bound is above the
    # two-sided interval's lower end (one-sided z is smaller)
    lo, hi = bissell_interval(value, n, conf)
    assert lo <= value <= hi
    assert bissell_interval(value, n, conf, "lower")[0] >= lo - 1e-12
    if value > 0:
        lo, hi = cp_chi2_interval(value, n, conf)
        assert lo <= value <= hi
