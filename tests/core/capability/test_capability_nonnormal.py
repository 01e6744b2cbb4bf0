"""Box-Cox, fitted distributions, the percentile method and the auto choice."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, special, stats

from workbench.core.capability.assess import assess, density_curve
from workbench.core.capability.formulas import normal_indices, percentile_indices
from workbench.core.model import Spec, WorkbenchError
from workbench.core.capability.nonnormal import (MIN_FIT_READINGS, TAIL, boxcox_lambda, boxcox_llf, fit_models,
                                     weibull_mle)

SAMPLES = {
    "lognormal": lambda r: r.lognormal(1.0, 0.5, 150),
    "gamma": lambda r: r.gamma(3.0, 2.0, 80),
    "weibull": lambda r: 5.0 * r.weibull(1.5, 60),
    "near-normal": lambda r: r.normal(100.0, 3.0, 40),
    "tiny-values": lambda r: r.lognormal(-9.0, 0.3, 50),
    "strong-skew": lambda r: r.lognormal(0.0, 1.5, 200),
}


@pytest.mark.parametrize("name", sorted(SAMPLES))
def test_boxcox_lambda_equals_scipy(name):
    # reference library: scipy.stats.boxcox (lambda by maximum likelihood)
    x = SAMPLES[name](np.random.default_rng(11))
    _, ref = stats.boxcox(x)
    assert boxcox_lambda(x) == pytest.approx(ref, abs=1e-6)


@pytest.mark.parametrize("lam", [-2.0, -0.5, 0.0, 0.3, 1.0, 2.5])
def test_boxcox_llf_equals_scipy(lam):
    # reference library: scipy.stats.boxcox_llf (profile log-likelihood, Box & Cox 1964)
    x = np.random.default_rng(12).lognormal(0.5, 0.4, 70)
    assert boxcox_llf(lam, x) == pytest.approx(stats.boxcox_llf(lam, x), rel=1e-10)


def test_boxcox_method_transforms_data_and_limits_with_the_same_lambda():
    # Box & Cox (1964) applied to capability [definition]: transform readings and limits with the
    # same lambda, then the normal formulas; reference transform: scipy.stats.boxcox(x, lmbda)
    x = np.random.default_rng(13).lognormal(1.0, 0.4, 120)
    cap = assess(x, 0.8, "mrbar", Spec(lsl=0.8, usl=12.0, method="box-cox"))
    lam = stats.boxcox(x)[1]
    y = stats.boxcox(x, lmbda=lam)
    lsl_t, usl_t = stats.boxcox(np.array([0.8, 12.0]), lmbda=lam)
    assert cap.boxcox_lambda == pytest.approx(lam, abs=1e-6)
    assert (cap.boxcox.lsl_t, cap.boxcox.usl_t) == pytest.approx((lsl_t, usl_t), abs=1e-6)
    ref = normal_indices(y.mean(), y.std(ddof=1), lsl_t, usl_t)
    assert (cap.pp, cap.ppl, cap.ppu, cap.ppk) == pytest.approx(
        (ref.potential, ref.lower, ref.upper, ref.worst), rel=1e-6)
    # the transformed normal model's fallout [definition]
    assert cap.ppm_overall.above == pytest.approx(1e6 * stats.norm.sf(usl_t, y.mean(), y.std(ddof=1)), rel=1e-5)
    assert cap.cp is None and cap.cpk is None and cap.ppm_within is None  # P indices only (documented)
    assert any("only the overall indices" in c for c in cap.cautions)


def test_boxcox_with_a_stated_shift_equals_boxcox_of_shifted_data():
    # definition of the stated shift: readings and limits are moved by the same amount first
    rng = np.random.default_rng(14)
    x = rng.lognormal(1.0, 0.4, 100) - 2.0           # some readings are negative
    with pytest.raises(WorkbenchError, match="positive readings"):
        assess(x, 0.5, "mrbar", Spec(usl=10.0, method="box-cox"))
    with pytest.raises(WorkbenchError, match="shift"):
        assess(x, 0.5, "mrbar", Spec(usl=10.0, method="box-cox", shift=0.5))
    shifted = assess(x, 0.5, "mrbar", Spec(usl=10.0, method="box-cox", shift=2.5))
    plain = assess(x + 2.5, 0.5, "mrbar", Spec(usl=12.5, method="box-cox"))
    assert shifted.boxcox_lambda == pytest.approx(stats.boxcox(x + 2.5)[1], abs=1e-6)
    assert shifted.ppk == pytest.approx(plain.ppk, rel=1e-9)


def test_boxcox_refuses_a_limit_at_or_below_zero():
    x = np.random.default_rng(15).lognormal(1.0, 0.4, 60)
    with pytest.raises(WorkbenchError, match="LSL"):
        assess(x, 0.5, "mrbar", Spec(lsl=0.0, usl=10.0, method="box-cox"))


@pytest.mark.parametrize("method", ["box-cox", "percentile"])
def test_too_few_readings_to_fit(method):
    x = np.random.default_rng(16).lognormal(1.0, 0.4, MIN_FIT_READINGS - 1)
    with pytest.raises(WorkbenchError, match=f"at least {MIN_FIT_READINGS} readings"):
        assess(x, 0.5, "mrbar", Spec(usl=10.0, method=method))


def test_percentile_method_on_a_large_lognormal_sample_matches_the_true_distribution():
    # ISO 22514-2 percentile method [definition]; true indices from scipy.stats.lognorm.ppf at the
    # 0.135 %, 50 %, 99.865 % points. 20,000 seeded readings; tolerance 3 % relative, about 4 standard
    # errors (the SD of the estimates over 30 seeded repetitions was 0.3-0.7 % relative).
    true = stats.lognorm(0.25, 0.0, np.e)
    q = true.ppf([TAIL, 0.5, 1.0 - TAIL])
    ref = percentile_indices(*q, 1.0, 6.0)
    x = true.rvs(20000, random_state=np.random.default_rng(17))
    cap = assess(x, None, "mrbar", Spec(lsl=1.0, usl=6.0, method="percentile"))
    assert cap.fit.distribution == "lognormal" and cap.fit.criterion == "AIC"
    assert cap.fit.runner_up in ("gamma", "weibull", "normal")
    for got, want in zip((cap.pp, cap.ppl, cap.ppu, cap.ppk), (ref.potential, ref.lower, ref.upper, ref.worst)):
        assert got == pytest.approx(want, rel=0.03)
    # fallout from the fitted model vs the true cdf / sf; tolerance 15 % relative (tail extrapolation)
    assert cap.ppm_overall.above == pytest.approx(1e6 * true.sf(6.0), rel=0.15)
    assert cap.pp_ci is None and cap.ppk_ci is None  # no bounds for the percentile method (documented)


@pytest.mark.parametrize("truth, maker", [
    ("lognormal", lambda r: r.lognormal(0.0, 0.6, 3000)),
    ("weibull", lambda r: 4.0 * r.weibull(1.3, 3000)),
    ("gamma", lambda r: r.gamma(1.5, 2.0, 3000)),
])
def test_fit_picks_the_generating_family(truth, maker):
    # maximum likelihood + AIC (Akaike 1974) on 3000 seeded readings picks the true family
    fit = fit_models(maker(np.random.default_rng(18)), None, ("normal", "lognormal", "weibull", "gamma"))
    assert fit.distribution == truth
    assert [c.aic for c in fit.candidates] == sorted(c.aic for c in fit.candidates)
    # reference library: scipy's own MLE fit (location fixed at 0) gives the same parameters;
    # scipy's Weibull fit is a Nelder-Mead search, hence the looser tolerance there
    ref = {"lognormal": stats.lognorm, "weibull": stats.weibull_min, "gamma": stats.gamma}[truth]
    shape, _, scale = ref.fit(maker(np.random.default_rng(18)), floc=0)
    rel = 1e-4 if truth == "weibull" else 1e-9
    assert [v for _, v in fit.params] == pytest.approx([shape, scale], rel=rel)


@pytest.mark.parametrize("seed, shape", [(1, 0.4), (2, 1.0), (3, 3.5), (4, 12.0)])
def test_weibull_mle_maximises_the_likelihood(seed, shape):
    # reference library: scipy.stats.weibull_min.logpdf; our root must not be beaten by scipy's fit
    x = 7.0 * np.random.default_rng(seed).weibull(shape, 400)
    c, scale = weibull_mle(x)
    ours = stats.weibull_min.logpdf(x, c, 0, scale).sum()
    rc, _, rscale = stats.weibull_min.fit(x, floc=0)
    assert ours >= stats.weibull_min.logpdf(x, rc, 0, rscale).sum() - 1e-9
    assert c == pytest.approx(rc, rel=1e-3)


def test_positive_models_are_skipped_for_non_positive_readings():
    x = np.random.default_rng(19).normal(0.0, 1.0, 50)
    fit = fit_models(x, None, ("normal", "lognormal", "weibull", "gamma", "box-cox"))
    assert fit.distribution == "normal" and len(fit.candidates) == 1
    assert len(fit.skipped) == 4


def test_auto_keeps_normal_for_normal_readings_and_says_why():
    x = np.random.default_rng(20).normal(10.0, 1.0, 200)
    cap = assess(x, 1.0, "rbar", Spec(lsl=6.0, usl=14.0))
    assert cap.normality.passed and cap.method == "normal"
    assert "does not reject normality" in cap.method_reason and cap.fit is None


def test_auto_moves_away_from_normal_for_skewed_readings_and_names_the_runner_up():
    x = np.random.default_rng(21).lognormal(1.0, 0.5, 300)
    cap = assess(x, 1.0, "mrbar", Spec(usl=20.0))
    assert not cap.normality.passed
    assert cap.method in ("percentile", "box-cox")
    assert "rejects normality" in cap.method_reason and "runner-up" in cap.method_reason
    assert cap.fit.runner_up is not None and cap.fit.runner_up_aic >= cap.fit.aic


def test_auto_with_too_few_readings_keeps_normal_with_a_warning():
    x = np.array([1.0, 1.1, 1.0, 1.2, 1.0, 5.0, 1.1, 1.0])  # clearly not normal, 8 readings
    cap = assess(x, 0.1, "mrbar", Spec(usl=8.0))
    assert cap.method == "normal" and not cap.normality.passed
    assert any("too few" in w for w in cap.warnings)


@pytest.mark.parametrize("method, maker", [
    ("normal", lambda r: r.normal(5.0, 1.0, 100)),
    ("box-cox", lambda r: r.lognormal(1.0, 0.5, 100)),
    ("percentile", lambda r: r.gamma(2.0, 1.5, 100)),
])
def test_density_curve_is_a_density_on_the_original_scale(method, maker):
    # definition of a density: it integrates to 1 over the real line (numerical quadrature)
    x = maker(np.random.default_rng(22))
    cap = assess(x, float(np.std(x)), "mrbar", Spec(usl=float(x.max()) * 2, method=method))
    total, _ = integrate.quad(lambda v: float(density_curve(cap, np.array([v]))[0]), -50, 200, limit=400)
    assert total == pytest.approx(1.0, abs=1e-3)
    grid = np.linspace(x.min(), x.max(), 7)
    if method == "normal":    # reference: scipy.stats.norm.pdf
        assert density_curve(cap, grid) == pytest.approx(stats.norm.pdf(grid, x.mean(), x.std(ddof=1)))
    if method == "box-cox":   # change of variables: pdf_y(T(x)) * x^(lambda - 1)
        b = cap.boxcox
        want = stats.norm.pdf(special.boxcox(grid, b.lam), b.mean_t, b.sd_t) * grid ** (b.lam - 1)
        assert density_curve(cap, grid) == pytest.approx(want, rel=1e-9)


def test_auto_with_non_positive_skewed_readings_and_no_shift_says_why_it_keeps_normal():
    x = np.random.default_rng(23).lognormal(0.0, 0.8, 200) - 1.5   # skewed, many readings below 0
    cap = assess(x, 1.0, "mrbar", Spec(usl=10.0))
    assert cap.method == "normal" and "no other model could be fitted" in cap.method_reason
    assert any("needs every reading + shift above 0" in w for w in cap.warnings)
    shifted = assess(x, 1.0, "mrbar", Spec(usl=10.0, shift=1.6))
    assert shifted.method in ("percentile", "box-cox")
