"""Tail probabilities against scipy (the reference library)."""
import numpy as np
import pytest
from scipy import special, stats

from workbench.core.tails import beta_inc, chi2_sf, f_sf, gamma_q, log_norm_cdf, norm_cdf


@pytest.mark.parametrize("a,b,x", [(0.5, 0.5, 0.3), (2, 3, 0.6), (50, 2, 0.97), (2, 5e5, 1e-6), (5e5, 2, 0.99999),
                                   (1e4, 1e4, 0.5), (3, 1, 1e-9)])
def test_incomplete_beta_equals_scipy(a, b, x):
    assert beta_inc(a, b, x) == pytest.approx(special.betainc(a, b, x), rel=1e-9, abs=1e-300)


@pytest.mark.parametrize("f,d1,d2", [(0.5, 3, 20), (5.64, 5, 858), (40.0, 4, 999_995), (1.0, 1, 1), (0.01, 10, 3),
                                     (300.0, 5, 1_000_000)])
def test_f_tail_equals_scipy(f, d1, d2):
    assert f_sf(f, d1, d2) == pytest.approx(stats.f.sf(f, d1, d2), rel=1e-8, abs=1e-300)


@pytest.mark.parametrize("x,df", [(0.1, 1), (3.84, 1), (40.7, 5), (1e3, 4), (7.0, 10), (2500.0, 3), (0.5, 30)])
def test_chi_square_tail_equals_scipy(x, df):
    assert chi2_sf(x, df) == pytest.approx(stats.chi2.sf(x, df), rel=1e-9, abs=1e-300)
    assert gamma_q(df / 2, x / 2) == pytest.approx(special.gammaincc(df / 2, x / 2), rel=1e-9, abs=1e-300)


def test_normal_distribution_function_equals_scipy():
    x = np.linspace(-9.5, 9.5, 401)
    assert np.allclose(norm_cdf(x), special.ndtr(x), rtol=1e-13, atol=0)
    assert np.allclose(log_norm_cdf(x), special.log_ndtr(x), rtol=1e-12, atol=1e-15)
