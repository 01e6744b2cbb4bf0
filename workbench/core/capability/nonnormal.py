"""Models for non-normal readings: the Box-Cox transform and fitted distributions.

Every model is fitted by maximum likelihood and compared by AIC = 2k - 2 log L on the
ORIGINAL scale of the readings (the Box-Cox likelihood includes its Jacobian), so the
numbers of different models are comparable.  Positive-support models (lognormal, Weibull,
gamma, Box-Cox) are fitted to ``readings + shift`` with a stated shift (0 when none).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import optimize, special, stats

from workbench.core.model import WorkbenchError

MIN_FIT_READINGS = 10
"""Fewest readings for which a Box-Cox lambda or a distribution is fitted."""
CANDIDATES = ("normal", "lognormal", "weibull", "gamma")
"""Distributions the percentile method chooses from."""
POSITIVE = ("lognormal", "weibull", "gamma", "box-cox")
TAIL = float(stats.norm.cdf(-3.0))
"""The 0.135 % point (Phi(-3)) of the percentile method; 99.865 % is 1 - TAIL."""


@dataclass(frozen=True)
class BinnedFit:
    """Pearson's chi-square test of a fitted model on the counts per resolution cell (rounded readings)."""

    statistic: float
    """Σ (observed − expected)² / expected over the pooled cells."""
    df: int
    """Pooled cells − 1 − fitted parameters."""
    p: float | None
    """Upper-tail chi-square probability (None when df < 1: too few cells to test)."""
    cells: int
    """Number of pooled cells."""


@dataclass(frozen=True)
class Candidate:
    """One model fitted to the readings."""

    name: str
    """normal | lognormal | weibull | gamma | box-cox."""
    params: tuple[tuple[str, float], ...]
    """Fitted parameters as (name, value) pairs (scipy's parametrisation; loc fixed at 0 for
    positive-support models, which are fitted to readings + shift)."""
    loglik: float
    """Maximised log-likelihood on the original scale."""
    aic: float
    """Akaike information criterion, 2k - 2 log L (lower is better)."""
    ad_statistic: float
    """Anderson–Darling A² of the readings against the fitted model (shown, not used to choose)."""
    binned: BinnedFit | None = None
    """For rounded readings: the test of fit on the counts per resolution cell (None otherwise)."""


@dataclass(frozen=True)
class FitInfo:
    """The chosen non-normal model, the runner-up and the goodness of fit of all candidates."""

    distribution: str
    """The chosen model (a Candidate name)."""
    params: tuple[tuple[str, float], ...]
    """Parameters of the chosen model."""
    criterion: str
    """How the model was chosen: "AIC" (lowest Akaike information criterion)."""
    aic: float
    """AIC of the chosen model."""
    runner_up: str | None
    """The next-best model by AIC (None when only one could be fitted)."""
    runner_up_aic: float | None
    """AIC of the runner-up."""
    candidates: tuple[Candidate, ...]
    """Every model fitted: the chosen one first, then the others by AIC."""
    skipped: tuple[str, ...]
    """Plain-words reasons why some models were not fitted."""
    shift: float
    """Shift added to the readings before fitting positive-support models."""
    step: float | None = None
    """The reading grid δ when the models were fitted to rounded readings as intervals
    [x − δ/2, x + δ/2] (interval-censored maximum likelihood; AIC then compares those fits)."""


def boxcox_llf(lam: float, x: np.ndarray) -> float:
    """Box-Cox profile log-likelihood ``(lam - 1) sum(log x) - n/2 log(var(y))``, var with divisor n.

    Computed on log-centred data so that large ``|lam|`` does not overflow.

    References
    ----------
    Box, G. E. P. and Cox, D. R. (1964), "An analysis of transformations", JRSS B 26(2).
    """
    logx = np.log(x)
    n, mlog = logx.size, float(logx.mean())
    if abs(lam) < 1e-12:
        logvar = math.log(float(np.var(logx)))
    else:  # var(x^lam / lam) = exp(2 lam mlog) var(exp(lam (logx - mlog))) / lam^2
        logvar = 2.0 * lam * mlog + math.log(float(np.var(np.exp(lam * (logx - mlog))))) - 2.0 * math.log(abs(lam))
    return (lam - 1.0) * float(logx.sum()) - 0.5 * n * logvar


def boxcox_lambda(x: np.ndarray) -> float:
    """Maximum-likelihood Box-Cox lambda of positive readings (Brent's method from [-2, 2]).

    References
    ----------
    Box, G. E. P. and Cox, D. R. (1964), "An analysis of transformations", JRSS B 26(2).
    """
    res = optimize.minimize_scalar(lambda lam: -boxcox_llf(lam, x), bracket=(-2.0, 2.0),
                                   method="brent", options={"xtol": 1e-12})
    return float(res.x)


def boxcox(x, lam: float):
    """The Box-Cox transform (x^lam - 1)/lam, log x at lam = 0."""
    return special.boxcox(np.asarray(x, dtype=float), lam)


def boxcox_pdf(x, lam: float, shift: float, mean_t: float, sd_t: float) -> np.ndarray:
    """Density on the original scale of readings whose Box-Cox transform is normal(mean_t, sd_t)."""
    u = np.asarray(x, dtype=float) + shift
    out = np.zeros_like(u)
    ok = u > 0
    y = boxcox(u[ok], lam)
    out[ok] = stats.norm.pdf(y, mean_t, sd_t) * u[ok] ** (lam - 1.0)
    return out


def frozen(name: str, params: tuple[tuple[str, float], ...]):
    """The scipy frozen distribution of a fitted candidate (on the shifted scale)."""
    p = dict(params)
    if name == "normal":
        return stats.norm(p["mean"], p["sd"])
    if name == "lognormal":
        return stats.lognorm(p["s"], 0.0, p["scale"])
    if name == "weibull":
        return stats.weibull_min(p["c"], 0.0, p["scale"])
    if name == "gamma":
        return stats.gamma(p["a"], 0.0, p["scale"])
    raise ValueError(f"no frozen distribution for {name!r}")


def _log_tail(values: np.ndarray, tail, log_tail) -> np.ndarray:
    """log of a distribution's cdf (or sf): the plain value where it is not tiny, the log form elsewhere."""
    p = tail(values)
    out = np.log(np.maximum(p, 1e-300))
    tiny = p < 1e-200
    if tiny.any():
        out[tiny] = log_tail(values[tiny])
    return out


def _ad_fitted(x_sorted: np.ndarray, dist) -> float:
    n = x_sorted.size
    i = np.arange(1, n + 1)
    with np.errstate(divide="ignore"):
        lc = _log_tail(x_sorted, dist.cdf, dist.logcdf)
        ls = _log_tail(x_sorted[::-1], dist.sf, dist.logsf)
    return float(-n - np.sum((2 * i - 1) * (lc + ls)) / n)


def _candidate(name: str, params: dict[str, float], x: np.ndarray) -> Candidate:
    dist = frozen(name, tuple(params.items()))
    loglik = float(np.sum(dist.logpdf(x)))
    k = len(params)
    return Candidate(name, tuple(params.items()), loglik, 2 * k - 2 * loglik, _ad_fitted(x, dist))  # x sorted by fit_models


def weibull_mle(u: np.ndarray) -> tuple[float, float]:
    """Maximum-likelihood Weibull shape c and scale (location 0) of positive readings.

    Solves the profile equation sum(x^c log x)/sum(x^c) - 1/c - mean(log x) = 0 (increasing in c)
    by Brent's method, then scale = mean(x^c)^(1/c); computed on log-centred data.

    References
    ----------
    Cohen, A. C. (1965), "Maximum likelihood estimation in the Weibull distribution based on
    complete and on censored samples", Technometrics 7(4).
    """
    lx = np.log(u)
    lx = lx - lx.max()               # x^c / max^c in (0, 1]: no overflow
    mlog = float(lx.mean())

    def g(c: float) -> float:
        w = np.exp(c * lx)
        return float(np.dot(w, lx) / w.sum()) - 1.0 / c - mlog

    lo, hi = 0.5, 2.0
    while g(lo) > 0:
        lo /= 4.0
    while g(hi) < 0:
        hi *= 4.0
    c = optimize.brentq(g, lo, hi, xtol=1e-14, rtol=1e-13)
    scale = float(np.exp(np.log(u).max() + math.log(float(np.mean(np.exp(c * lx)))) / c))
    return float(c), scale


BOXCOX_MAX_LAMBDA = 5.0
"""Largest |λ| accepted (common practice restricts the Box-Cox search to −5…5)."""


def fit_boxcox(u: np.ndarray) -> Candidate:
    """Box-Cox model of positive readings ``u`` (in increasing order): lambda by ML, then a normal on the transformed scale."""
    lam = boxcox_lambda(u)
    if abs(lam) > BOXCOX_MAX_LAMBDA:
        raise ValueError(f"\u03bb = {lam:.3g} lies outside \u00b1{BOXCOX_MAX_LAMBDA:g}, where the transform is "
                         "numerically unstable (often a sign of an outlier or a narrow range far from 0)")
    with np.errstate(over="ignore", invalid="ignore"):
        y = boxcox(u, lam)
        mean_t, sd_t = float(y.mean()), float(y.std(ddof=1))
    if not (math.isfinite(mean_t) and math.isfinite(sd_t) and sd_t > 0):
        raise ValueError(f"the transform with \u03bb = {lam:.4g} overflows")
    loglik = boxcox_llf(lam, u) - 0.5 * u.size * (math.log(2 * math.pi) + 1.0)
    ad = _ad_fitted(y, stats.norm(mean_t, sd_t))  # u sorted, the transform increasing
    params = (("lambda", lam), ("mean", mean_t), ("sd", sd_t))
    return Candidate("box-cox", params, loglik, 6.0 - 2.0 * loglik, ad)


def positive_readings(x: np.ndarray, shift: float | None, purpose: str) -> np.ndarray:
    """``x + shift`` checked to be positive; raises WorkbenchError naming the smallest reading."""
    u = x + (shift or 0.0)
    if u.min() > 0:
        return u
    low = float(x.min())
    if shift:
        raise WorkbenchError(f"{purpose} needs every reading + shift above 0, but the smallest reading "
                             f"{low:g} + shift {shift:g} = {low + shift:g}")
    raise WorkbenchError(f"{purpose} needs positive readings, but the smallest is {low:g}; state a "
                         "shift so that every reading + shift is above 0, or use the percentile method")


def fit_models(x: np.ndarray, shift: float | None, names: tuple[str, ...]) -> FitInfo:
    """Fit the named models (any of CANDIDATES and "box-cox") and rank them by AIC.

    Positive-support models are skipped (with a reason) when a reading + shift is not above 0.

    References
    ----------
    Akaike, H. (1974), "A new look at the statistical model identification", IEEE Transactions
    on Automatic Control 19(6): AIC = 2k - 2 log L.
    """
    if x.size < MIN_FIT_READINGS:
        raise WorkbenchError(f"fitting a distribution needs at least {MIN_FIT_READINGS} readings, got {x.size}")
    x = np.sort(x)                        # once: every A² below needs the readings in order
    positive = x[0] + (shift or 0.0) > 0
    u = x + (shift or 0.0)
    fitted, skipped = [], []
    for name in names:
        if name in POSITIVE and not positive:
            skipped.append(f"{name}: needs every reading + shift above 0")
            continue
        try:
            if name == "normal":
                fitted.append(_candidate(name, {"mean": float(x.mean()), "sd": float(x.std())}, x))
            elif name == "box-cox":
                fitted.append(fit_boxcox(u))
            elif name == "weibull":
                c, scale = weibull_mle(u)
                fitted.append(_candidate(name, {"c": c, "scale": scale}, u))
            else:
                shape, _, scale = (stats.lognorm if name == "lognormal" else stats.gamma).fit(u, floc=0.0)
                key = "s" if name == "lognormal" else "a"
                fitted.append(_candidate(name, {key: float(shape), "scale": float(scale)}, u))
        except (ValueError, RuntimeError, FloatingPointError) as exc:
            skipped.append(f"{name}: the fit failed ({exc})")
    fitted = [c for c in fitted if math.isfinite(c.aic)]
    if not fitted:
        raise WorkbenchError("no distribution could be fitted to the readings: " + "; ".join(skipped))
    fitted.sort(key=lambda c: c.aic)
    best = fitted[0]
    second = fitted[1] if len(fitted) > 1 else None
    return FitInfo(best.name, best.params, "AIC", best.aic, second.name if second else None,
                   second.aic if second else None, tuple(fitted), tuple(skipped), float(shift or 0.0))


def model_percentiles(fit: FitInfo) -> tuple[float, float, float]:
    """The 0.135 %, 50 % and 99.865 % points of a fitted distribution, on the original scale.

    References
    ----------
    ISO 22514-2 percentile method (0.135 % = Phi(-3), 99.865 % = Phi(3)).
    """
    q = frozen(fit.distribution, fit.params).ppf([TAIL, 0.5, 1.0 - TAIL])
    shift = 0.0 if fit.distribution == "normal" else fit.shift
    return float(q[0]) - shift, float(q[1]) - shift, float(q[2]) - shift


def choose(fit: FitInfo, name: str) -> FitInfo:
    """The same fit with ``name`` as the chosen model and the best other model as runner-up."""
    chosen = next(c for c in fit.candidates if c.name == name)
    others = [c for c in fit.candidates if c.name != name]
    second = others[0] if others else None
    return FitInfo(name, chosen.params, fit.criterion, chosen.aic, second.name if second else None,
                   second.aic if second else None, (chosen, *others), fit.skipped, fit.shift, fit.step)


def ad_of(name: str, params: tuple[tuple[str, float], ...], x: np.ndarray, shift: float) -> float:
    """Anderson–Darling A² of the readings ``x`` against a fitted candidate (Box-Cox: on its scale)."""
    if name == "box-cox":
        p = dict(params)
        return _ad_fitted(np.sort(boxcox(x + shift, p["lambda"])), stats.norm(p["mean"], p["sd"]))
    return _ad_fitted(np.sort(x + (0.0 if name == "normal" else shift)), frozen(name, params))
