"""Normality checks for capability: Anderson–Darling with a p-value, plus a second opinion."""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats

from workbench.core.capability.censored import binned_fit, cells_of, fit_censored
from workbench.core.capability.nonnormal import BinnedFit

ALPHA = 0.05
"""Significance level of the normality verdict (and of the ``auto`` method choice)."""
SHAPIRO_MAX_N = 5000
"""Largest sample scipy's Shapiro–Wilk p-value is stated for; above it a probability-plot
correlation is reported instead."""
AD_P_METHOD = ("D'Agostino & Stephens (1986) formulas for the adjusted value "
               "A*² = A²(1 + 0.75/n + 2.25/n²), mean and variance estimated")


@dataclass(frozen=True)
class Normality:
    """Result of the normality checks on the readings."""

    n: int
    """Number of readings tested."""
    ad_statistic: float
    """Anderson–Darling A² against a normal with the sample mean and SD."""
    ad_adjusted: float
    """The small-sample adjusted A*² (A² times 1 + 0.75/n + 2.25/n²) used for the p-value."""
    ad_p: float
    """p-value of the Anderson–Darling test."""
    ad_p_method: str
    """How the p-value was obtained (names the published formulas)."""
    sw_statistic: float | None
    """Shapiro–Wilk W (scipy), or None when n > 5000."""
    sw_p: float | None
    """Shapiro–Wilk p-value, or None when n > 5000."""
    ppcc: float
    """Correlation of the normal probability plot (ordered readings against normal quantiles)."""
    passed: bool
    """True when the Anderson–Darling p-value is at least ``alpha``."""
    alpha: float
    """Significance level used for ``passed``."""
    verdict: str
    """The result in plain words."""
    test: str = "anderson-darling"
    """The test ``passed`` rests on: "anderson-darling" on the readings, or "binned chi-square" on
    the counts per resolution cell when the readings are rounded."""
    binned: BinnedFit | None = None
    """Rounded readings: Pearson's chi-square of the interval-censored normal fit over the cells."""
    interval_mean: float | None = None
    """Rounded readings: the mean of the interval-censored normal fit."""
    interval_sd: float | None = None
    """Rounded readings: the standard deviation of the interval-censored normal fit (free of the
    rounding's δ²/12)."""


def ad_statistic(x, axis: int = -1):
    """Anderson–Darling A² of samples against a normal with their own mean and SD (ddof=1).

    Works along ``axis`` so that many samples can be tested at once.

    References
    ----------
    Anderson, T. W. and Darling, D. A. (1954), "A test of goodness of fit", JASA 49;
    Stephens, M. A. (1974), "EDF statistics for goodness of fit and some comparisons", JASA 69.
    """
    x = np.sort(np.asarray(x, dtype=float), axis=axis)
    x = np.moveaxis(x, axis, -1)
    n = x.shape[-1]
    z = (x - x.mean(axis=-1, keepdims=True)) / x.std(axis=-1, ddof=1, keepdims=True)
    i = np.arange(1, n + 1)
    terms = (2 * i - 1) * (stats.norm.logcdf(z) + stats.norm.logsf(z[..., ::-1]))
    a2 = -n - terms.sum(axis=-1) / n
    return float(a2) if np.ndim(a2) == 0 else a2


def ad_pvalue(a2_adjusted):
    """p-value of the normal Anderson–Darling test from the adjusted A*² value.

    References
    ----------
    D'Agostino, R. B. and Stephens, M. A. (1986), *Goodness-of-Fit Techniques*, Marcel Dekker,
    Table 4.9 (case 3, mean and variance estimated):
    A* >= 0.6: p = exp(1.2937 - 5.709 A* + 0.0186 A*²);
    0.34 <= A* < 0.6: p = exp(0.9177 - 4.279 A* - 1.38 A*²);
    0.2 <= A* < 0.34: p = 1 - exp(-8.318 + 42.796 A* - 59.938 A*²);
    A* < 0.2: p = 1 - exp(-13.436 + 101.14 A* - 223.73 A*²).
    """
    # the first formula's quadratic turns upward past its vertex 5.709/(2*0.0186) = 153.5, where
    # p is already about 1e-190: hold A* there so that p keeps falling towards 0
    a = np.minimum(np.asarray(a2_adjusted, dtype=float), 5.709 / (2 * 0.0186))
    with np.errstate(over="ignore"):
        p = np.select(
            [a >= 0.6, a >= 0.34, a >= 0.2],
            [np.exp(1.2937 - 5.709 * a + 0.0186 * a * a),
             np.exp(0.9177 - 4.279 * a - 1.38 * a * a),
             1.0 - np.exp(-8.318 + 42.796 * a - 59.938 * a * a)],
            1.0 - np.exp(-13.436 + 101.14 * a - 223.73 * a * a))
    p = np.clip(p, 0.0, 1.0)
    return float(p) if p.ndim == 0 else p


def _fmt_p(p: float, relation: str = "", alpha: float = ALPHA) -> str:
    if p < 1e-4:
        return "p < 0.0001"
    text = f"p = {p:.4f}" if p < 0.01 else f"p = {p:.3f}"
    return text + (f" {relation} {alpha:g}" if relation else "")


def normality(x: np.ndarray, alpha: float = ALPHA, step: float | None = None) -> Normality:
    """Anderson–Darling test (with p-value) and Shapiro–Wilk or a probability-plot correlation.

    ``x`` must hold at least 3 finite readings that are not all equal (the caller checks).  With
    ``step`` (rounded readings on that grid) the verdict rests instead on Pearson's chi-square of
    the interval-censored normal fit over the resolution cells: rounding alone makes the
    Anderson–Darling and Shapiro–Wilk tests reject (ties), whatever the process.

    References
    ----------
    D'Agostino, R. B. and Stephens, M. A. (1986), *Goodness-of-Fit Techniques*, ch. 4;
    Shapiro, S. S. and Wilk, M. B. (1965), Biometrika 52 (via ``scipy.stats.shapiro``);
    Filliben, J. J. (1975), "The probability plot correlation coefficient test", Technometrics 17.
    """
    x = np.asarray(x, dtype=float)
    n = int(x.size)
    a2 = ad_statistic(x)
    a2s = a2 * (1.0 + 0.75 / n + 2.25 / (n * n))
    p = ad_pvalue(a2s)
    passed = bool(p >= alpha)
    sw_w = sw_p = None
    if n <= SHAPIRO_MAX_N:
        res = stats.shapiro(x)
        sw_w, sw_p = float(res.statistic), float(res.pvalue)
    (_, _), (_, _, r) = stats.probplot(x, dist="norm")
    words = [
        (f"Consistent with a normal distribution: the Anderson–Darling test does not reject "
         f"normality (A² = {a2:.3f}, {_fmt_p(p, '≥', alpha)})." if passed else
         f"Not consistent with a normal distribution: the Anderson–Darling test rejects "
         f"normality (A² = {a2:.3f}, {_fmt_p(p, '<', alpha)}).")]
    if sw_p is not None:
        agree = (sw_p >= alpha) == passed
        words.append(f"Shapiro–Wilk {'agrees' if agree else 'disagrees'} (W = {sw_w:.4f}, {_fmt_p(sw_p)}).")
    else:
        words.append(f"Probability-plot correlation r = {r:.4f} (Shapiro–Wilk is not used above "
                     f"{SHAPIRO_MAX_N} readings).")
    binned = im = isd = None
    if step:
        cells = cells_of(x, step)
        params, _ = fit_censored("normal", {"mean": float(x.mean()), "sd": float(x.std())}, cells)
        binned = binned_fit("normal", params, cells)
        im, isd = float(params["mean"]), float(params["sd"])
        step_text = f"{step:g}"
        cells_words = f"{binned.cells} pooled cells of the {step_text} grid"
        if binned.p is None:                 # too few readings for a test on the cells: the test on the readings
            step = None
            words.append(f"(Too few readings for a test over the {step_text} grid's cells: {binned.cells} pooled.)")
        else:
            passed = bool(binned.p >= alpha)
            words = [(f"Consistent with a normal distribution on the resolution cells: " if passed else
                      f"Not consistent with a normal distribution on the resolution cells: ")
                     + f"Pearson's chi-square of the interval-censored normal fit over {cells_words} "
                     + f"{'does not reject' if passed else 'rejects'} it (\u03c7\u00b2 = {binned.statistic:.2f}, "
                     + f"df {binned.df}, {_fmt_p(binned.p, '≥' if passed else '<', alpha)}).",
                     f"Tests on the rounded readings themselves are not used, as ties alone make them reject "
                     f"(Anderson–Darling A² = {a2:.3f}, {_fmt_p(p)}"
                     + (f"; Shapiro–Wilk {_fmt_p(sw_p)}" if sw_p is not None else "") + ")."]
    if passed and n < 20:
        words.append(f"With only {n} readings the tests have little power to detect non-normality.")
    if not passed and n > 1000:
        words.append(f"With {n} readings the test detects departures too small to matter in "
                     "practice; judge the size of the departure and the quantile plot too.")
    return Normality(n=n, ad_statistic=a2, ad_adjusted=float(a2s), ad_p=p, ad_p_method=AD_P_METHOD,
                     sw_statistic=sw_w, sw_p=sw_p, ppcc=float(r) if math.isfinite(r) else 0.0,
                     passed=passed, alpha=alpha, verdict=" ".join(words), test="binned chi-square" if step else
                     "anderson-darling", binned=binned, interval_mean=im, interval_sd=isd)
