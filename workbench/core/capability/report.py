"""Report sections of a capability result: JSON, terminal text and Markdown.

The text and Markdown sections share one composition: the verdict, the specification strip
(LSL … USL once, the within and overall natural spread as two bands, mean and target marked), the
figures as statements (``statements.py``), the normal quantile plot with the model's line.

Views only: every figure comes from the ``Capability`` result.  NaN and infinities become
None in JSON (``json.dumps(..., allow_nan=False)`` always works) and "n/a" in text.
"""
from __future__ import annotations

import math
import textwrap
from typing import Any

from workbench.core.capability.assess import Capability
from workbench.core.capability.formulas import Fallout
from workbench.core.capability.histogram import text_histogram
from workbench.core.capability.picture import quantile_plot, scale, spec_strip, strip_legend
from workbench.core.capability.statements import statements
from workbench.core.model import SIGMA_METHOD_LABELS

__all__ = ["capability_json", "capability_text", "capability_markdown", "pictures", "text_histogram", "title"]

TITLE = "Capability against the specification"
INDEX_NAMES = ("cp", "cpl", "cpu", "cpk", "pp", "ppl", "ppu", "ppk", "cpm", "k")
BOUNDED = ("cp", "cpk", "pp", "ppk", "cpm")
LABEL = {"cp": "Cp", "cpl": "Cpl", "cpu": "Cpu", "cpk": "Cpk", "pp": "Pp", "ppl": "Ppl", "ppu": "Ppu",
         "ppk": "Ppk", "cpm": "Cpm", "k": "k"}


def _f(v: Any) -> float | None:
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None


def _clean(obj: Any) -> Any:
    """Replace every non-finite float by None, recursively; tuples become lists."""
    if isinstance(obj, dict):
        return {k: _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    if isinstance(obj, bool) or obj is None or isinstance(obj, (str, int)):
        return obj
    if isinstance(obj, float) or hasattr(obj, "__float__"):
        return _f(obj)
    return obj


def _fallout(f: Fallout | None) -> dict | None:
    return None if f is None else {"below_lsl": f.below, "above_usl": f.above, "total": f.total}


def _binned(b) -> dict | None:
    return None if b is None else {"statistic": b.statistic, "df": b.df, "p": b.p, "cells": b.cells}


def capability_json(cap: Capability) -> dict:
    """Every figure of the result as plain JSON types; bounds as [low, high] (None = unbounded)."""
    norm = cap.normality
    fit = cap.fit
    out = {
        "method": cap.method, "method_requested": cap.method_requested, "method_reason": cap.method_reason,
        "spec": {"lsl": cap.lsl, "usl": cap.usl, "target": cap.target,
                 "target_given": cap.spec.target is not None, "required": cap.required,
                 "confidence": cap.ci_level, "bounds": cap.ci_kind, "shift": cap.spec.shift},
        "n": cap.n, "mean": cap.mean, "sigma_within": cap.sigma_within,
        "sigma_within_method": cap.sigma_within_method,
        "sigma_within_label": SIGMA_METHOD_LABELS.get(cap.sigma_within_method, cap.sigma_within_method),
        "sigma_overall": cap.sigma_overall, "sigma_ratio": cap.sigma_ratio,
        "indices": {name: getattr(cap, name) for name in INDEX_NAMES},
        "ci_level": cap.ci_level, "ci_kind": cap.ci_kind,
        "bounds": {name: (None if getattr(cap, f"{name}_ci") is None else list(getattr(cap, f"{name}_ci")))
                   for name in BOUNDED},
        "ppm": {"within": _fallout(cap.ppm_within), "overall": _fallout(cap.ppm_overall),
                "observed": _fallout(cap.ppm_observed)},
        "normality": None if norm is None else {
            "n": norm.n, "ad_statistic": norm.ad_statistic, "ad_adjusted": norm.ad_adjusted,
            "ad_p": norm.ad_p, "ad_p_method": norm.ad_p_method, "sw_statistic": norm.sw_statistic,
            "sw_p": norm.sw_p, "ppcc": norm.ppcc, "alpha": norm.alpha, "passed": norm.passed,
            "verdict": norm.verdict, "test": norm.test, "binned": _binned(norm.binned),
            "interval_mean": norm.interval_mean, "interval_sd": norm.interval_sd},
        "fit": None if fit is None else {
            "distribution": fit.distribution, "params": dict(fit.params), "criterion": fit.criterion,
            "aic": fit.aic, "runner_up": fit.runner_up, "runner_up_aic": fit.runner_up_aic,
            "shift": fit.shift, "skipped": list(fit.skipped), "interval_step": fit.step,
            "candidates": [{"name": c.name, "params": dict(c.params), "loglik": c.loglik, "aic": c.aic,
                            "ad_statistic": c.ad_statistic, "binned": _binned(c.binned)} for c in fit.candidates]},
        "boxcox_lambda": cap.boxcox_lambda,
        "boxcox": None if cap.boxcox is None else {
            "lambda": cap.boxcox.lam, "shift": cap.boxcox.shift, "mean": cap.boxcox.mean_t,
            "sd": cap.boxcox.sd_t, "lsl": cap.boxcox.lsl_t, "usl": cap.boxcox.usl_t,
            "target": cap.boxcox.target_t,
            "normality_p": None if cap.boxcox.normality is None else cap.boxcox.normality.ad_p},
        "percentiles": None if cap.percentiles is None else dict(
            zip(("p0_135", "p50", "p99_865"), cap.percentiles)),
        "headline": {"index": cap.headline, "value": cap.headline_value, "required": cap.required,
                     "meets_required": cap.meets_required, "bound_meets_required": cap.bound_meets_required},
        "verdict": cap.verdict, "common_practice": cap.common_practice, "open_signals": cap.open_signals,
        "warnings": list(cap.warnings), "cautions": list(cap.cautions),
        "resolution": None if cap.resolution is None else {
            k: getattr(cap.resolution, k) for k in ("step", "decimals", "distinct", "step_over_sigma",
                                                    "steps_in_spread", "tolerance_share", "rounded", "coarse")},
        "departure": None if cap.departure is None else {
            k: getattr(cap.departure, k) for k in ("model", "low", "high", "basis", "room", "share", "threshold",
                                                   "matters")},
    }
    return _clean(out)


def _wrap(text: str, width: int, indent: str = "") -> str:
    return textwrap.fill(text, width, initial_indent=indent, subsequent_indent=" " * len(indent),
                         break_on_hyphens=False)


def pictures(cap: Capability, readings=None, width: int = 80, unit: str | None = None,
             plot_height: int = 12) -> tuple[str, str, str | None]:
    """(strip, its legend, quantile plot or None without readings) on one shared horizontal scale."""
    lo_hi = scale(cap, readings)
    strip = spec_strip(cap, width, unit, lo_hi)
    plot = None
    if readings is not None and len(readings) and cap.sigma_overall > 0:
        step = cap.resolution.step if cap.resolution is not None and cap.resolution.rounded else None
        plot = quantile_plot(cap, readings, width, plot_height, unit, lo_hi, step)
    return strip, strip_legend(cap, width), plot


def title(name: str | None = None, unit: str | None = None) -> str:
    """"Capability of fill (mL) against the specification"."""
    if not name and not unit:
        return TITLE
    what = name or "the readings"
    return f"Capability of {what}" + (f" ({unit})" if unit else "") + " against the specification"


def capability_text(cap: Capability, width: int = 80, readings=None, name: str | None = None,
                    unit: str | None = None) -> str:
    """The capability section for the terminal; no line is longer than ``width``.

    Verdict first, then the specification strip, the figures as statements, the normal quantile
    plot (when the readings are given), the warnings and the notes.
    """
    width = max(int(width), 40)
    head = title(name, unit)
    says = statements(cap, unit, name)
    out = [head[:width], "\u2500" * min(len(head), width), _wrap(says[0][1], width), ""]
    strip, legend, plot = pictures(cap, readings, width, unit)
    out += [strip, legend, ""]
    out += [_wrap(t, width, "  ") for k, t in says[1:] if k not in ("warning", "note")]
    if plot:
        out += ["", "Normal quantile plot", plot]
    warnings = [t for k, t in says if k == "warning"]
    if warnings:
        out += ["", "Warnings:"] + [_wrap(w, width, "  ! ") for w in warnings]
    out += ["", "Notes:"] + [_wrap(t, width, "  - ") for k, t in says if k == "note"]
    return "\n".join(line.rstrip() for line in out)


def capability_markdown(cap: Capability, readings=None, name: str | None = None, unit: str | None = None) -> str:
    """The capability section of the review document (Markdown), in the same composition as the text."""
    says = statements(cap, unit, name)
    strip, legend, plot = pictures(cap, readings, 88, unit)
    out = [f"### {title(name, unit)}", "", f"**{says[0][1]}**", "", "```", strip, legend, "```", ""]
    out += [f"- {t}" for k, t in says[1:] if k not in ("warning", "note")]
    if plot:
        out += ["", "Normal quantile plot of the readings with the model's line:", "", "```", plot, "```"]
    warnings = [t for k, t in says if k == "warning"]
    if warnings:
        out += ["", "**Warnings**", ""] + [f"- {w}" for w in warnings]
    out += ["", "**Notes**", ""] + [f"- {t}" for k, t in says if k == "note"]
    return "\n".join(out) + "\n"
