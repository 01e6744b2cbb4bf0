"""Choosing the capability method (normal, Box-Cox or percentile) and the Box-Cox figures."""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from workbench.core.model import Spec, WorkbenchError
from workbench.core.capability.nonnormal import (CANDIDATES, MIN_FIT_READINGS, FitInfo, boxcox, choose, fit_models,
                        positive_readings)
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
    """"p = 0.012 < 0.05" (or "p < 0.0001" without the comparison)."""
    if res.ad_p < 1e-4:
        return "p < 0.0001"
    return f"p = {res.ad_p:.3g}" + (f" {relation} {res.alpha:g}" if relation else "")


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


def resolve_method(x: np.ndarray, s: float, spec: Spec, lsl: float | None, usl: float | None,
                   target: float | None, norm: Normality | None, warn: list[str]):
    """Resolve ``spec.method`` to (method, reason, fit, boxcox_info); appends warnings to ``warn``.

    ``auto`` keeps the normal model when the Anderson–Darling p-value is at least 0.05;
    otherwise it fits normal, lognormal, Weibull, gamma and Box-Cox by maximum likelihood and
    takes the lowest AIC (Box-Cox -> box-cox method, a distribution -> percentile method).
    """
    shift = float(spec.shift) if spec.shift is not None else None
    if s == 0:
        return "normal", "the readings show no spread, so no model can be fitted", None, None
    if spec.method == "normal":
        if norm is not None and not norm.passed:
            warn.append(f"The readings do not look normal (Anderson\u2013Darling {_p(norm)}), yet the normal "
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
        fit = fit_models(x, shift, ("box-cox",) + CANDIDATES)
        if all(c.name != "box-cox" for c in fit.candidates):
            reason = next((r for r in fit.skipped if r.startswith("box-cox")), "box-cox: the fit failed")
            raise WorkbenchError(f"Box-Cox could not be applied ({reason}); use the percentile method")
        fit = choose(fit, "box-cox")
        bc = boxcox_info(fit, x, lsl, usl, target)
        after = f" after a shift of {shift:g}" if shift else ""
        return ("box-cox", f"the box-cox method was asked for; \u03bb = {bc.lam:.4g} by maximum likelihood{after}",
                fit, bc)
    if spec.method == "percentile":
        fit = fit_models(x, shift, CANDIDATES)
        return "percentile", f"the percentile method was asked for; of the distributions fitted, {ranking(fit)}", fit, None
    if norm is None:
        return "normal", "too few readings to test normality, so the normal model is used", None, None
    if norm.passed:
        return ("normal", f"the Anderson\u2013Darling test does not reject normality ({_p(norm, '≥')}), "
                "so the normal model is used", None, None)
    rejected = f"the Anderson\u2013Darling test rejects normality ({_p(norm, '<')})"
    if x.size < MIN_FIT_READINGS:
        warn.append(f"The readings do not look normal, but fewer than {MIN_FIT_READINGS} readings are too few "
                    "to fit another model: treat the normal-model figures with caution.")
        return "normal", f"{rejected}, but with fewer than {MIN_FIT_READINGS} readings no other model is fitted", None, None
    bad = _limits_transformable(lsl, usl, shift or 0.0)
    fit = fit_models(x, shift, CANDIDATES if bad else CANDIDATES + ("box-cox",))
    if bad:
        fit = dataclasses.replace(fit, skipped=fit.skipped + (f"box-cox: {bad}",))
    if len(fit.candidates) == 1:
        warn.append("The readings do not look normal, but no other model could be fitted (" + "; ".join(fit.skipped)
                    + "): the normal model is kept; treat the expected ppm with caution.")
        return "normal", f"{rejected}, but no other model could be fitted", fit, None
    if fit.distribution == "normal":
        warn.append("The readings do not look normal, but no other model fits them better by AIC: the normal "
                    "model is kept; treat the expected ppm with caution.")
        return "normal", f"{rejected}, but of the models fitted {ranking(fit)}", fit, None
    if fit.distribution == "box-cox":
        bc = boxcox_info(fit, x, lsl, usl, target)
        return ("box-cox", f"{rejected}; of the models fitted {ranking(fit)}, so readings and limits are "
                f"Box-Cox transformed (\u03bb = {bc.lam:.4g})", fit, bc)
    return ("percentile", f"{rejected}; of the models fitted {ranking(fit)}, so the percentile method "
            "is used on it", fit, None)
