"""Choosing the capability method (normal, Box-Cox or percentile) and the Box-Cox figures."""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from workbench.core.model import Spec, WorkbenchError
from workbench.core.capability.nonnormal import (CANDIDATES, MIN_FIT_READINGS, FitInfo, boxcox, choose, fit_models,
                        positive_readings)
from workbench.core.capability.censored import refit
from workbench.core.capability.departure import MATTERS, Departure, departure, tail_gap
from workbench.core.capability.normality import Normality, normality

DISPLAY = {"normal": "normal", "lognormal": "lognormal", "weibull": "Weibull", "gamma": "gamma",
           "box-cox": "Box-Cox normal"}


@dataclass(frozen=True)
class BoxCoxInfo:
    """Figures of the box-cox method on the transformed scale."""

    lam: float
    """The transform's lambda (maximum likelihood, equal to scipy.stats.boxcox's)."""
    shift: float
    """Shift added to readings and limits before the transform (0 when none)."""
    mean_t: float
    """Mean of the transformed readings."""
    sd_t: float
    """Sample SD (n - 1) of the transformed readings."""
    lsl_t: float | None
    """Transformed LSL."""
    usl_t: float | None
    """Transformed USL."""
    target_t: float | None
    """Transformed target."""
    normality: Normality | None
    """Normality checks of the transformed readings."""


def _p(res: Normality, relation: str = "") -> str:
    """"p = 0.012 < 0.05" (or "p < 0.0001" without the comparison) of the test the verdict rests on."""
    p = res.binned.p if res.test == "binned chi-square" else res.ad_p
    if p < 1e-4:
        return "p < 0.0001"
    return f"p = {p:.3g}" + (f" {relation} {res.alpha:g}" if relation else "")


def _test(res: Normality) -> str:
    """The name of the normality test the verdict rests on."""
    if res.test == "binned chi-square":
        return "the chi-square test of the normal model over the resolution cells"
    return "the Anderson\u2013Darling test"


def _small(dep: Departure) -> str:
    """"the lognormal's 0.135 % and 99.865 % points lie within 0.4 % of the tolerance of the normal model's"."""
    room = "the tolerance" if dep.basis == "tolerance" else "twice the distance from the mean to the limit"
    return (f"the {DISPLAY.get(dep.model, dep.model)}'s 0.135 % and 99.865 % points lie within "
            f"{100 * dep.share:.2g} % of {room} of the normal model's (below the {100 * dep.threshold:g} % "
            "that would change the method)")


def ranking(fit: FitInfo) -> str:
    """"the lognormal fits best by AIC (AIC 12.3; runner-up gamma, AIC 14.0)"."""
    text = f"the {DISPLAY[fit.distribution]} fits best by AIC (AIC {fit.aic:.1f}"
    if fit.runner_up is not None:
        text += f"; runner-up {DISPLAY[fit.runner_up]}, AIC {fit.runner_up_aic:.1f}"
    return text + ")"


def _limits_transformable(lsl: float | None, usl: float | None, shift: float) -> str | None:
    for name, v in (("LSL", lsl), ("USL", usl)):
        if v is not None and v + shift <= 0:
            return f"{name} + shift = {v + shift:g} is not above 0, so the {name} cannot be Box-Cox transformed"
    return None


def boxcox_info(fit: FitInfo, x: np.ndarray, lsl: float | None, usl: float | None,
                target: float | None) -> BoxCoxInfo:
    """Transform readings, limits and target with the fitted lambda and summarise."""
    lam, shift = dict(fit.params)["lambda"], fit.shift
    y = boxcox(x + shift, lam)
    t = lambda v: None if v is None else float(boxcox(v + shift, lam))  # noqa: E731
    sd = float(y.std(ddof=1))
    for v in (t(lsl), t(usl)):
        if v is not None and not np.isfinite(v):
            raise WorkbenchError(f"Box-Cox with \u03bb = {lam:.4g} cannot transform the limits (overflow); "
                                 "use the percentile method")
    return BoxCoxInfo(lam, shift, float(y.mean()), sd, t(lsl), t(usl), t(target),
                      normality(y) if y.size >= 3 and sd > 0 else None)


POOR_FIT_P = 1e-6
"""For rounded readings: p-value of the chosen model's chi-square over the resolution cells below which
no verdict is given (an A² of 2.5 for the normal family corresponds to p of about 3e-6)."""
POOR_FIT_AD = 2.5
"""Anderson–Darling A² of the chosen non-normal model above which no verdict is given.  The 1%
critical values of A² for the normal, Weibull and gamma families with estimated parameters lie near
1.0 (Stephens, in D'Agostino & Stephens 1986, ch. 4 [from memory]); 2.5 is a clear misfit for any."""


def poor_fit(c, fit: FitInfo, x: np.ndarray, lsl: float | None, usl: float | None) -> str | None:
    """Why the candidate ``c`` describes the readings too poorly to judge the tails (None when it does not).

    With enough readings to place the 0.135 % and 99.865 % points directly (about 7,400 or more) the
    size decides: the model is poor when its points lie at least MATTERS of the tolerance from the
    readings' own.  With fewer, a test decides: A² above POOR_FIT_AD, or for rounded readings the
    chi-square over the resolution cells below POOR_FIT_P.
    """
    gap = tail_gap(c.name, c.params, 0.0 if c.name == "normal" else fit.shift, x, lsl, usl)
    if gap is not None:
        if gap >= MATTERS:
            return (f"its 0.135 % and 99.865 % points lie {100 * gap:.2g} % of the tolerance from the readings' "
                    f"own, {100 * MATTERS:g} % or more")
        return None
    if c.binned is not None:
        if c.binned.p is not None and c.binned.p < POOR_FIT_P:
            return f"chi-square over the resolution cells {c.binned.statistic:.3g}, df {c.binned.df}, p below {POOR_FIT_P:g}"
        return None
    if c.ad_statistic > POOR_FIT_AD:
        return f"Anderson\u2013Darling A\u00b2 = {c.ad_statistic:.3g}; above about {POOR_FIT_AD:g} no common family fits"
    return None


def _fit(x: np.ndarray, shift: float | None, names: tuple[str, ...], step: float | None) -> FitInfo:
    """Fit the named models; rounded readings (``step``) are refitted as intervals [x ∓ δ/2]."""
    fit = fit_models(x, shift, names)
    return refit(fit, x, step) if step else fit


def resolve_method(x: np.ndarray, s: float, spec: Spec, lsl: float | None, usl: float | None,
                   target: float | None, norm: Normality | None, warn: list[str], step: float | None = None):
    """Resolve ``spec.method`` to (method, reason, fit, boxcox_info); appends warnings to ``warn``.

    ``auto`` keeps the normal model when the Anderson–Darling p-value is at least 0.05;
    otherwise it fits normal, lognormal, Weibull, gamma and Box-Cox by maximum likelihood and
    takes the lowest AIC (Box-Cox -> box-cox method, a distribution -> percentile method).
    With ``step`` (rounded readings) every model is fitted to the readings as intervals of that
    width and ``norm`` is the binned test of the interval-censored normal fit.
    """
    shift = float(spec.shift) if spec.shift is not None else None
    if s == 0:
        return "normal", "the readings show no spread, so no model can be fitted", None, None
    if spec.method == "normal":
        if norm is not None and not norm.passed:
            warn.append(f"The readings do not look normal ({_test(norm)}: {_p(norm)}), yet the normal "
                        "method was asked for: the indices and expected ppm may be far off; consider the "
                        "box-cox or percentile method.")
        return "normal", "the normal method was asked for", None, None
    if spec.method == "box-cox":
        if x.size < MIN_FIT_READINGS:
            raise WorkbenchError(f"Box-Cox needs at least {MIN_FIT_READINGS} readings to fit \u03bb, got {x.size}")
        positive_readings(x, shift, "Box-Cox")
        bad = _limits_transformable(lsl, usl, shift or 0.0)
        if bad:
            raise WorkbenchError(f"Box-Cox: {bad}; give only the other limit or state a shift")
        fit = _fit(x, shift, ("box-cox",) + CANDIDATES, step)
        if all(c.name != "box-cox" for c in fit.candidates):
            reason = next((r for r in fit.skipped if r.startswith("box-cox")), "box-cox: the fit failed")
            raise WorkbenchError(f"Box-Cox could not be applied ({reason}); use the percentile method")
        fit = choose(fit, "box-cox")
        bc = boxcox_info(fit, x, lsl, usl, target)
        after = f" after a shift of {shift:g}" if shift else ""
        return ("box-cox", f"the box-cox method was asked for; \u03bb = {bc.lam:.4g} by maximum likelihood{after}",
                fit, bc)
    if spec.method == "percentile":
        fit = _fit(x, shift, CANDIDATES, step)
        return "percentile", f"the percentile method was asked for; of the distributions fitted, {ranking(fit)}", fit, None
    if norm is None:
        return "normal", "too few readings to test normality, so the normal model is used", None, None
    if norm.passed:
        return ("normal", f"{_test(norm)} does not reject normality ({_p(norm, '≥')}), "
                "so the normal model is used", None, None)
    rejected = f"{_test(norm)} rejects normality ({_p(norm, '<')})"
    if x.size < MIN_FIT_READINGS:
        warn.append(f"The readings do not look normal, but fewer than {MIN_FIT_READINGS} readings are too few "
                    "to fit another model: treat the normal-model figures with caution.")
        return "normal", f"{rejected}, but with fewer than {MIN_FIT_READINGS} readings no other model is fitted", None, None
    bad = _limits_transformable(lsl, usl, shift or 0.0)
    fit = _fit(x, shift, CANDIDATES if bad else CANDIDATES + ("box-cox",), step)
    if bad:
        fit = dataclasses.replace(fit, skipped=fit.skipped + (f"box-cox: {bad}",))
    if len(fit.candidates) == 1:
        warn.append("The readings do not look normal, but no other model could be fitted (" + "; ".join(fit.skipped)
                    + "): the normal model is kept; treat the expected ppm with caution.")
        return "normal", f"{rejected}, but no other model could be fitted", fit, None
    dep = departure(fit, lsl, usl)
    if poor_fit(fit.candidates[0], fit, x, lsl, usl):       # no model fits: how far two misfits differ says nothing
        dep = None
    if fit.distribution == "normal":
        if dep is not None and dep.matters is False:
            return ("normal", f"{rejected}, but of the models fitted {ranking(fit)}, and the departure is small: "
                    f"{_small(dep)}", fit, None)
        warn.append("The readings do not look normal, but no other model fits them better by AIC: the normal "
                    "model is kept; treat the expected ppm with caution.")
        return "normal", f"{rejected}, but of the models fitted {ranking(fit)}", fit, None
    if dep is not None and dep.matters is False:
        return ("normal", f"{rejected} and of the models fitted {ranking(fit)}, but the departure is too small "
                f"to matter: {_small(dep)}, so the normal model is used", fit, None)
    if fit.distribution == "box-cox":
        bc = boxcox_info(fit, x, lsl, usl, target)
        return ("box-cox", f"{rejected}; of the models fitted {ranking(fit)}, so readings and limits are "
                f"Box-Cox transformed (\u03bb = {bc.lam:.4g})", fit, bc)
    return ("percentile", f"{rejected}; of the models fitted {ranking(fit)}, so the percentile method "
            "is used on it", fit, None)
