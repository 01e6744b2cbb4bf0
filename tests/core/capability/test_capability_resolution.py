"""Gauge resolution: the reading grid, interval-censored fits and the binned test of fit.

Sources: the interval-censored likelihood is the definition of maximum likelihood from grouped
data (Lindley 1950; Kulldorff 1961) [definition] and is written out here independently of the
code and maximised with scipy.optimize; the resolution rule of thumb (about ten steps across the
process spread, resolution at most 1/10 of the tolerance) is [common practice]; Sheppard's
correction (a rounding step δ adds about δ²/12 to the variance; Sheppard 1898) [from memory].
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import optimize, stats

from workbench.core.capability.assess import assess
from workbench.core.capability.censored import cells_of, fit_censored, binned_fit
from workbench.core.capability.resolution import detect_step, resolution
from workbench.core.model import Spec


@pytest.mark.parametrize("values, step, decimals", [
    ([499.8, 499.5, 500.3, 500.0, 501.1], 0.1, 1),            # [definition] a 0.1 grid
    ([1.0, 1.5, 2.5, 4.0, 3.5], 0.5, 1),                      # steps of 0.5, not 0.1
    ([0.2, 0.6, 1.0, 1.2, 2.2], 0.2, 1),                      # steps of 0.2 (gaps 0.4, 0.4, 0.2, 1.0)
    ([10, 12, 14, 20], 2.0, 0),                               # whole numbers in steps of 2
    ([0.125, 0.375, 0.5, 1.0], 0.125, 3),                     # eighths
])
def test_grid_is_found(values, step, decimals):
    got, dec = detect_step(np.array(values))
    assert got == pytest.approx(step, rel=1e-12) and dec == decimals


def test_continuous_readings_have_no_grid():
    x = np.random.default_rng(1).normal(10, 1, 200)
    assert detect_step(x) == (None, None)
    r = resolution(x, float(x.std(ddof=1)), 6, 14)
    assert r.step is None and not r.rounded and not r.coarse and r.distinct == 200


def _direct_fit(x, step):
    """Interval-censored normal log-likelihood written out here and maximised by scipy.optimize."""
    v, c = np.unique(x, return_counts=True)

    def nll(t):
        mu, sd = t[0], math.exp(t[1])
        p = stats.norm.cdf(v + step / 2, mu, sd) - stats.norm.cdf(v - step / 2, mu, sd)
        return -float(np.sum(c * np.log(p)))
    r = optimize.minimize(nll, [x.mean() + 0.1, math.log(x.std()) + 0.2], method="BFGS",
                          options={"gtol": 1e-9})
    r = optimize.minimize(nll, r.x, method="Nelder-Mead", options={"xatol": 1e-11, "fatol": 1e-12})
    return r.x[0], math.exp(r.x[1]), -r.fun


@pytest.mark.parametrize("step", [0.3, 1.0])
def test_interval_censored_normal_matches_a_direct_fit(step):
    rng = np.random.default_rng(7)
    x = np.round(rng.normal(10.0, 1.0, 400) / step) * step
    cells = cells_of(x, step)
    got, ll = fit_censored("normal", {"mean": x.mean(), "sd": x.std()}, cells)
    mu, sd, ll_direct = _direct_fit(x, step)
    assert got["mean"] == pytest.approx(mu, abs=1e-6) and got["sd"] == pytest.approx(sd, rel=1e-6)
    assert ll == pytest.approx(ll_direct, abs=1e-7)
    # the rounded readings' SD carries Sheppard's δ²/12 [from memory]; the interval fit does not
    if step == 1.0:
        assert x.std() > got["sd"] * 1.02


def test_binned_test_pools_sparse_cells_and_counts_df():
    rng = np.random.default_rng(8)
    x = np.round(rng.normal(0.0, 1.0, 600) / 0.3) * 0.3
    cells = cells_of(x, 0.3)
    p, _ = fit_censored("normal", {"mean": x.mean(), "sd": x.std()}, cells)
    b = binned_fit("normal", p, cells)
    # about 6σ/0.3 = 20 cells with data; the pooled ones each expect >= 5 readings [Cochran, common practice]
    assert 8 <= b.cells <= 22 and b.df == b.cells - 3
    assert b.p == pytest.approx(stats.chi2.sf(b.statistic, b.df))


def _normal_rounded(step, n=750, seed=21):
    x = np.random.default_rng(seed).normal(500.0, 1.0, n)      # σ = 1, so the step is δ/σ
    return x, np.round(x / step) * step


SPEC = Spec(lsl=496.0, usl=504.0, method="auto")                # Ppk about 1.33


def test_rounding_to_three_tenths_of_sigma_keeps_the_normal_method_and_the_verdict():
    raw, x = _normal_rounded(0.3)
    cap_raw, cap = assess(raw, 1.0, "rbar", SPEC), assess(x, 1.0, "rbar", SPEC)
    assert cap.method == "normal" and cap.headline is not None
    assert "No capability verdict" not in cap.verdict and cap.meets_required is not None
    assert cap.ppk == pytest.approx(cap_raw.ppk, rel=0.02)
    # its expected value under rounding: σ² + δ²/12 from the interval fit (Sheppard) [from memory]
    r = cap.resolution
    assert r.rounded and r.step == pytest.approx(0.3) and r.step_over_sigma == pytest.approx(0.3, rel=0.1)
    assert not r.coarse
    sd_expected = math.sqrt(cap.normality.interval_sd ** 2 + 0.3 ** 2 / 12)
    assert cap.sigma_overall == pytest.approx(sd_expected, rel=0.01)
    assert cap.ppk == pytest.approx(min(cap.mean - 496.0, 504.0 - cap.mean) / (3 * sd_expected), rel=0.02)
    # the Anderson-Darling test on the rounded readings rejects, as rounding alone makes it do
    assert cap.normality.ad_p < 0.05 and cap.normality.passed and cap.normality.test == "binned chi-square"
    assert not any("coarse" in w.lower() for w in cap.warnings)


def test_rounding_to_one_sigma_warns_of_coarse_resolution():
    _, x = _normal_rounded(1.0)                       # about 6 steps across 6σ
    cap = assess(x, 1.0, "rbar", SPEC)
    assert cap.resolution.coarse and cap.resolution.steps_in_spread < 10   # [common practice] about 10
    w = next(w for w in cap.warnings if "coarse" in w.lower())
    assert "\u03b4\u00b2/12" in w and "low" in w                          # and what it does to the indices


def test_tolerance_rule_of_thumb():
    x = np.round(np.random.default_rng(3).normal(10, 1, 300) / 0.5) * 0.5
    # δ = 0.5 and a tolerance of 4: δ is 1/8 of it, more than 1/10 [common practice]
    r = resolution(x, float(x.std(ddof=1)), 8.0, 12.0)
    assert r.tolerance_share == pytest.approx(0.125) and r.coarse
    assert not resolution(x, float(x.std(ddof=1)), 0.0, 20.0).coarse   # 1/40 and 12 steps in 6σ
