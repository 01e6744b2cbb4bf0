"""Process capability against a specification: ``assess`` and its frozen ``Capability`` result.

Methods
-------
* ``normal``: C indices with sigma within (the chart's estimator, passed in), P indices with
  sigma overall (sample SD of the readings); chi-square / Bissell / Boyles bounds; normal ppm.
* ``box-cox``: readings and limits transformed with the same ML lambda (after the stated
  shift); the normal formulas on the transformed scale give the P indices, their bounds (lambda
  treated as known) and the overall ppm.
* ``percentile``: ISO 22514-2 percentile indices from the fitted normal, lognormal, Weibull or
  gamma distribution with the lowest AIC; ppm from the fitted model; no confidence bounds.
* ``auto``: normal when the Anderson–Darling p-value is at least 0.05, else the model with the
  lowest AIC among the four distributions and Box-Cox.

Non-normal methods report only the overall (P) indices: sigma within is a short-term spread
on the original scale under a normal model, with no counterpart on the fitted model's scale.
A zero sigma is not an error: the indices it would define are None and a warning says why.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats

from workbench.core.capability import words
from workbench.core.capability.formulas import (BOUND_KINDS, Fallout, Indices, bissell_interval, boyles_cpm_interval,
                                  centring_k, cp_chi2_interval, cpm_index, fallout, normal_fallout,
                                  normal_indices, observed_fallout, percentile_indices)
from workbench.core.capability.departure import Departure, departure
from workbench.core.capability.method import BoxCoxInfo, poor_fit, resolve_method
from workbench.core.capability.resolution import Resolution, resolution
from workbench.core.model import SIGMA_METHOD_LABELS, Spec, WorkbenchError
from workbench.core.capability.nonnormal import FitInfo, boxcox_pdf, frozen, model_percentiles
from workbench.core.capability.normality import Normality, normality

METHODS = ("normal", "box-cox", "percentile", "auto")
Interval = tuple[float, float]


@dataclass(frozen=True)
class Capability:
    """Capability of the non-excluded readings against one specification."""

    spec: Spec
    """The specification and settings as given."""
    lsl: float | None
    """Lower specification limit (None for an upper-only specification)."""
    usl: float | None
    """Upper specification limit (None for a lower-only specification)."""
    target: float | None
    """Target used for Cpm: as given, else the midpoint of a two-sided specification."""
    n: int
    """Number of readings assessed."""
    mean: float
    """Arithmetic mean of the readings (original scale)."""
    sigma_within: float | None
    """Within-subgroup sigma from the chart's estimator (None when not available)."""
    sigma_within_method: str
    """Id of that estimator (rbar, sbar, pooled, mrbar, known, ...)."""
    sigma_overall: float
    """Sample standard deviation (n - 1) of the readings."""
    sigma_ratio: float | None
    """sigma_overall / sigma_within (None when either is not positive)."""
    method: str
    """The method used: normal | box-cox | percentile."""
    method_requested: str
    """The method asked for (may be auto)."""
    method_reason: str
    """Why this method was used, in words."""
    cp: float | None
    """Cp = (USL - LSL)/(6 sigma within); two-sided, normal method only."""
    cpl: float | None
    """Cpl = (mean - LSL)/(3 sigma within)."""
    cpu: float | None
    """Cpu = (USL - mean)/(3 sigma within)."""
    cpk: float | None
    """Cpk = min(Cpl, Cpu); the single side for a one-sided specification."""
    pp: float | None
    """Pp with sigma overall (or the model's spread for box-cox / percentile)."""
    ppl: float | None
    """Ppl (lower side, overall)."""
    ppu: float | None
    """Ppu (upper side, overall)."""
    ppk: float | None
    """Ppk = min(Ppl, Ppu); the single side for a one-sided specification."""
    cpm: float | None
    """Cpm with sigma overall and the target; two-sided, normal and box-cox methods."""
    k: float | None
    """Centring ratio |midpoint - centre| / half-width (centre: mean, transformed mean or median)."""
    cp_ci: Interval | None
    """Confidence bounds (low, high) for Cp; high is +inf for lower bounds."""
    cpk_ci: Interval | None
    """Confidence bounds for Cpk (Bissell)."""
    pp_ci: Interval | None
    """Confidence bounds for Pp (chi-square)."""
    ppk_ci: Interval | None
    """Confidence bounds for Ppk (Bissell)."""
    cpm_ci: Interval | None
    """Confidence bounds for Cpm (Boyles)."""
    ci_level: float
    """Confidence level of the bounds."""
    ci_kind: str
    """two-sided | lower."""
    ppm_within: Fallout | None
    """Expected ppm with sigma within (normal method only)."""
    ppm_overall: Fallout | None
    """Expected ppm with sigma overall, or from the transformed / fitted model."""
    ppm_observed: Fallout
    """ppm of the readings actually outside the specification."""
    normality: Normality | None
    """Normality checks of the readings (None with fewer than 3 readings or no spread)."""
    fit: FitInfo | None
    """The fitted models (chosen, parameters, runner-up, AIC of all) for box-cox / percentile, and
    for auto when it fitted them but kept the normal model; None otherwise."""
    boxcox_lambda: float | None
    """The Box-Cox lambda (maximum likelihood) when the box-cox method is used."""
    boxcox: BoxCoxInfo | None
    """Transformed-scale figures of the box-cox method."""
    percentiles: tuple[float, float, float] | None
    """0.135 %, 50 %, 99.865 % points of the fitted model (percentile method)."""
    required: float
    """The required minimum index."""
    headline: str | None
    """The index the verdict is about: Cpk (normal method with sigma within) or Ppk."""
    headline_value: float | None
    """Its value."""
    meets_required: bool | None
    """The headline index is at least the required minimum."""
    bound_meets_required: bool | None
    """Its lower confidence bound is at least the required minimum (None without a bound)."""
    verdict: str
    """The verdict against the required minimum, in words."""
    common_practice: str
    """The headline index against the common thresholds 1.00 / 1.33 / 1.67 / 2.00."""
    open_signals: int
    """Open signals on the charts when the capability was assessed."""
    warnings: tuple[str, ...]
    """Problems with this result (stability, sample size, spread, fit)."""
    cautions: tuple[str, ...]
    """Standing remarks on how to read the figures."""
    resolution: Resolution | None = None
    """The readings' grid (δ, distinct values, δ/σ, coarse or not); None without spread."""
    departure: Departure | None = None
    """How far the best non-normal model's 0.135 % / 99.865 % points lie from the normal model's, as a
    share of the tolerance (None when no other model was fitted)."""


def _num(spec: Spec, name: str) -> float | None:
    v = getattr(spec, name)
    if v is None:
        return None
    try:
        f = float(v)
    except (TypeError, ValueError):
        raise WorkbenchError(f"the specification's {name} must be a number, got {v!r}") from None
    if not math.isfinite(f):
        raise WorkbenchError(f"the specification's {name} must be a finite number, got {v!r}")
    return f


def validate_spec(spec: Spec) -> None:
    """Raise WorkbenchError (one line) when the specification cannot be assessed."""
    if not isinstance(spec, Spec):
        raise WorkbenchError("no specification given: set an LSL, a USL or both")
    lsl, usl, target = _num(spec, "lsl"), _num(spec, "usl"), _num(spec, "target")
    _num(spec, "shift")
    if lsl is None and usl is None:
        raise WorkbenchError("no specification given: set an LSL, a USL or both")
    if lsl is not None and usl is not None and lsl >= usl:
        raise WorkbenchError(f"the LSL ({lsl:g}) must be below the USL ({usl:g})")
    if target is not None and ((lsl is not None and target < lsl) or (usl is not None and target > usl)):
        raise WorkbenchError(f"the target ({target:g}) lies outside the specification "
                             f"[{'-inf' if lsl is None else f'{lsl:g}'}, {'inf' if usl is None else f'{usl:g}'}]")
    conf, req = _num(spec, "confidence"), _num(spec, "required")
    if conf is None or not 0.0 < conf < 1.0:
        raise WorkbenchError(f"the confidence level must be between 0 and 1 (e.g. 0.95), got {spec.confidence!r}")
    if req is None or req <= 0:
        raise WorkbenchError(f"the required minimum index must be above 0 (e.g. 1.33), got {spec.required!r}")
    if spec.method not in METHODS:
        raise WorkbenchError(f"unknown capability method {spec.method!r} (use {', '.join(METHODS)})")
    if spec.bounds not in BOUND_KINDS:
        raise WorkbenchError(f"unknown kind of confidence bounds {spec.bounds!r} (use {', '.join(BOUND_KINDS)})")


def _sigma(v: float | None) -> float | None:
    if v is None:
        return None
    v = float(v)
    if math.isnan(v):
        return None
    if v < 0 or math.isinf(v):
        raise WorkbenchError(f"the within-subgroup sigma must be a finite number of at least 0, got {v:g}")
    return v


def _ci(fn, value: float | None, *args) -> Interval | None:
    return None if value is None else fn(value, *args)


def assess(readings: np.ndarray, sigma_within: float | None, sigma_method: str, spec: Spec,
           open_signals: int = 0) -> Capability:
    """Capability of the readings against ``spec`` (see the module docstring for the methods).

    Parameters
    ----------
    readings : ndarray
        The non-excluded readings (non-finite values are dropped with a warning).
    sigma_within : float or None
        Within-subgroup sigma from the chart's estimator, the same as the limits use.
    sigma_method : str
        Id of that estimator (rbar, sbar, pooled, mrbar, known).
    spec : Spec
        Limits, target, confidence, required minimum, method, bounds kind and shift.
    open_signals : int
        Signals still open on the charts; any open signal adds the stability warning.

    Returns
    -------
    Capability

    Raises
    ------
    WorkbenchError
        Invalid specification, fewer than 2 readings, negative sigma, non-positive readings or
        limits for Box-Cox without a sufficient shift, fewer than 10 readings to fit a model.

    References
    ----------
    Kane (1986) for the indices; Bissell (1990), Boyles (1991) and the chi-square interval for
    the bounds; Box and Cox (1964); ISO 22514-2 and Clements (1989) for the percentile method.
    """
    validate_spec(spec)
    if int(open_signals) < 0:
        raise WorkbenchError(f"open_signals must be 0 or more, got {open_signals}")
    raw = np.asarray(readings, dtype=float).ravel()
    x = raw[np.isfinite(raw)]
    n = int(x.size)
    if n < 2:
        raise WorkbenchError(f"capability needs at least 2 readings, got {n}")
    lsl, usl, given_target = _num(spec, "lsl"), _num(spec, "usl"), _num(spec, "target")
    two = lsl is not None and usl is not None
    target = given_target if given_target is not None else ((lsl + usl) / 2.0 if two else None)
    conf, kind, req = float(spec.confidence), spec.bounds, float(spec.required)
    sw = _sigma(sigma_within)
    mean, s = float(x.mean()), float(x.std(ddof=1))
    warn: list[str] = []
    for w in (words.stability_warning(int(open_signals)), words.small_n_warning(n)):
        if w:
            warn.append(w)
    if raw.size > n:
        warn.append(f"{raw.size - n} non-finite readings were ignored.")
    res = resolution(x, s, lsl, usl) if s > 0 else None
    step = res.step if res is not None and res.rounded else None
    norm_res = normality(x, step=step) if n >= 3 and s > 0 else None
    method, reason, fit, bc = resolve_method(x, s, spec, lsl, usl, target, norm_res, warn, step)
    dep = departure(fit, lsl, usl) if fit is not None else None
    w = words.resolution_warning(res, s, norm_res.interval_sd if norm_res is not None else None)
    if w:
        warn.append(w)
    label = SIGMA_METHOD_LABELS.get(sigma_method, sigma_method)
    if method == "normal" and s > 0:
        if sw is None:
            warn.append("No within-subgroup sigma was given: Cp, Cpk and the within ppm are not reported.")
        elif sw == 0:
            warn.append("\u03c3 within is 0 (readings identical within every subgroup; gauge too coarse?): "
                        "Cp, Cpk and the within ppm are undefined and not reported.")
    if s == 0:
        warn.append(f"All {n} readings are equal: \u03c3 overall is 0, so the indices, ppm and the normality "
                    "test are undefined and not reported (gauge resolution too coarse?).")
    ratio = s / sw if sw and s > 0 else None
    w = words.sigma_ratio_warning(ratio, method)
    if w:
        warn.append(w)

    c = Indices(None, None, None, None)
    cpm = cpm_ci = kk = percentiles = None
    ppm_within = None
    if method == "normal":
        c = normal_indices(mean, sw if s > 0 else None, lsl, usl)
        p = normal_indices(mean, s, lsl, usl)
        ppm_within = normal_fallout(mean, sw, lsl, usl) if s > 0 else None
        ppm_overall = normal_fallout(mean, s, lsl, usl)
        centre, sd_c, tgt, lo, hi = mean, s, target, lsl, usl
    elif method == "box-cox":
        p = normal_indices(bc.mean_t, bc.sd_t, bc.lsl_t, bc.usl_t)
        ppm_overall = normal_fallout(bc.mean_t, bc.sd_t, bc.lsl_t, bc.usl_t)
        centre, sd_c, tgt, lo, hi = bc.mean_t, bc.sd_t, bc.target_t, bc.lsl_t, bc.usl_t
    else:
        percentiles = model_percentiles(fit)
        p = percentile_indices(*percentiles, lsl, usl)
        dist, shift = frozen(fit.distribution, fit.params), (0.0 if fit.distribution == "normal" else fit.shift)
        ppm_overall = fallout(lsl, usl, dist.cdf(lsl + shift) if lsl is not None else None,
                              dist.sf(usl + shift) if usl is not None else None)
        centre, sd_c, tgt, lo, hi = percentiles[1], None, None, lsl, usl
    if two and sd_c is not None and sd_c > 0:
        cpm = cpm_index(centre, sd_c, tgt, lo, hi)
        cpm_ci = _ci(boyles_cpm_interval, cpm, n, (centre - tgt) / sd_c, conf, kind)
    if two and (sd_c is None or sd_c > 0):
        kk = centring_k(centre, lo, hi)
    with_bounds = method != "percentile"
    cp_ci = _ci(cp_chi2_interval, c.potential, n, conf, kind)
    cpk_ci = _ci(bissell_interval, c.worst, n, conf, kind)
    pp_ci = _ci(cp_chi2_interval, p.potential, n, conf, kind) if with_bounds else None
    ppk_ci = _ci(bissell_interval, p.worst, n, conf, kind) if with_bounds else None

    if method == "normal" and c.worst is not None:
        head, hv, hci = "Cpk", c.worst, cpk_ci
    else:
        head, hv, hci = ("Ppk", p.worst, ppk_ci) if p.worst is not None else (None, None, None)
    why = "the readings show no spread, so the indices are undefined"
    chosen = next((c for c in fit.candidates if c.name == fit.distribution), None) if fit is not None else None
    poor = poor_fit(chosen, fit, x, lsl, usl) if method != "normal" and chosen is not None else None
    if poor:
        warn.append(f"Even the best-fitting model ({chosen.name}) describes the readings poorly ({poor}): look "
                    "for outliers, mixed streams or open signals before trusting any index.")
        head, hv, hci = None, None, None
        why = "no fitted model describes the readings well enough to judge the tails"
    text, meets, bound_meets = words.verdict(head, hv, hci, req, conf, kind, why)
    cautions = [words.ESTIMATES, words.interval_caution(method, label)]
    if method != "normal":
        cautions.append(words.within_caution(method))
    if method == "box-cox":
        cautions.append(words.BOXCOX_SCALE)
    return Capability(
        spec=spec, lsl=lsl, usl=usl, target=target, n=n, mean=mean, sigma_within=sw,
        sigma_within_method=sigma_method, sigma_overall=s, sigma_ratio=ratio, method=method,
        method_requested=spec.method, method_reason=reason, cp=c.potential, cpl=c.lower, cpu=c.upper,
        cpk=c.worst, pp=p.potential, ppl=p.lower, ppu=p.upper, ppk=p.worst, cpm=cpm, k=kk,
        cp_ci=cp_ci, cpk_ci=cpk_ci, pp_ci=pp_ci, ppk_ci=ppk_ci, cpm_ci=cpm_ci, ci_level=conf, ci_kind=kind,
        ppm_within=ppm_within, ppm_overall=ppm_overall, ppm_observed=observed_fallout(x, lsl, usl),
        normality=norm_res, fit=fit, boxcox_lambda=bc.lam if bc else None, boxcox=bc,
        percentiles=percentiles, required=req, headline=head, headline_value=hv, meets_required=meets,
        bound_meets_required=bound_meets, verdict=text, common_practice=words.common_practice(head, hv),
        open_signals=int(open_signals), warnings=tuple(warn), cautions=tuple(cautions), resolution=res,
        departure=dep)


def density_curve(cap: Capability, x: np.ndarray) -> np.ndarray:
    """The fitted density on the ORIGINAL scale at ``x``, for drawing over the histogram.

    Normal method: normal(mean, sigma overall); box-cox: the back-transformed normal including
    the Jacobian; percentile: the chosen fitted distribution.  NaN everywhere when the readings
    have no spread (no density exists).

    References
    ----------
    Box and Cox (1964) for the back-transformed density f(x) = phi((T(x) - m)/s)/s * x^(lambda - 1).
    """
    x = np.asarray(x, dtype=float)
    if cap.sigma_overall <= 0:
        return np.full_like(x, np.nan)
    if cap.method == "box-cox" and cap.boxcox is not None:
        b = cap.boxcox
        return boxcox_pdf(x, b.lam, b.shift, b.mean_t, b.sd_t)
    if cap.method == "percentile" and cap.fit is not None:
        shift = 0.0 if cap.fit.distribution == "normal" else cap.fit.shift
        return frozen(cap.fit.distribution, cap.fit.params).pdf(x + shift)
    return stats.norm.pdf(x, cap.mean, cap.sigma_overall)
