"""Report sections of a capability result: JSON, terminal text and Markdown.

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
from workbench.core.capability.words import num, ppm
from workbench.core.model import SIGMA_METHOD_LABELS

__all__ = ["capability_json", "capability_text", "capability_markdown", "text_histogram"]

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
            "verdict": norm.verdict},
        "fit": None if fit is None else {
            "distribution": fit.distribution, "params": dict(fit.params), "criterion": fit.criterion,
            "aic": fit.aic, "runner_up": fit.runner_up, "runner_up_aic": fit.runner_up_aic,
            "shift": fit.shift, "skipped": list(fit.skipped),
            "candidates": [{"name": c.name, "params": dict(c.params), "loglik": c.loglik, "aic": c.aic,
                            "ad_statistic": c.ad_statistic} for c in fit.candidates]},
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
    }
    return _clean(out)


def _bound(ci: tuple[float, float] | None, kind: str) -> str:
    if ci is None:
        return ""
    low, high = ci
    if kind == "lower" or not math.isfinite(high):
        return f"\u2265 {num(low)}"
    return f"{num(low)} \u2013 {num(high)}"


def _spec_line(cap: Capability) -> str:
    parts = [f"LSL {cap.lsl:g}" if cap.lsl is not None else "no LSL",
             (f"target {cap.target:g}" + ("" if cap.spec.target is not None else " (midpoint)"))
             if cap.target is not None else None,
             f"USL {cap.usl:g}" if cap.usl is not None else "no USL",
             f"n = {cap.n}", f"required \u2265 {cap.required:g}"]
    return " \u00b7 ".join(p for p in parts if p)


def _index_rows(cap: Capability) -> list[tuple[str, str, str, str, str, str]]:
    # Cpm uses the overall SD and the target, and k is the centring ratio: they go in the overall column
    pairs = (("cp", "pp"), ("cpl", "ppl"), ("cpu", "ppu"), ("cpk", "ppk"), (None, "cpm"), (None, "k"))
    rows = []
    for a, b in pairs:
        left = (LABEL[a], num(getattr(cap, a)), _bound(getattr(cap, f"{a}_ci", None), cap.ci_kind)) if a else ("", "", "")
        rows.append(left + (LABEL[b], num(getattr(cap, b)), _bound(getattr(cap, f"{b}_ci", None), cap.ci_kind)))
    return rows


def _ppm_rows(cap: Capability) -> list[tuple[str, str, str, str]]:
    rows = []
    for name, f in (("expected, within", cap.ppm_within), ("expected, overall", cap.ppm_overall),
                    ("observed", cap.ppm_observed)):
        rows.append((name, ppm(f.below) if f else "n/a", ppm(f.above) if f else "n/a", ppm(f.total) if f else "n/a"))
    return rows


def _fit_line(cap: Capability) -> str | None:
    fit = cap.fit
    if fit is None:
        return None
    params = ", ".join(f"{k} {v:.4g}" for k, v in fit.params)
    text = f"Fitted model: {fit.distribution} ({params}), AIC {fit.aic:.1f}"
    if fit.runner_up:
        lower = fit.runner_up_aic < fit.aic   # the chosen model was asked for, not picked by AIC
        text += f"; {'best alternative' if lower else 'runner-up'} {fit.runner_up}, AIC {fit.runner_up_aic:.1f}"
    return text + (f"; not fitted: {'; '.join(fit.skipped)}" if fit.skipped else "") + "."


def _sigma_line(cap: Capability) -> str:
    label = SIGMA_METHOD_LABELS.get(cap.sigma_within_method, cap.sigma_within_method)
    text = f"\u03c3 within {num(cap.sigma_within)} ({label}), \u03c3 overall {num(cap.sigma_overall)}"
    if cap.sigma_ratio is not None:
        text += f", ratio {num(cap.sigma_ratio)}"
    return text + f"; mean {num(cap.mean)}"


def _columns(rows: list[tuple[str, ...]], right: tuple[bool, ...]) -> list[str]:
    """Rows laid out in columns as wide as their widest cell (numbers right-aligned)."""
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    return ["  ".join(c.rjust(w) if r else c.ljust(w) for c, w, r in zip(row, widths, right)).rstrip()
            for row in rows]


def _index_table(cap: Capability, ci: str, width: int) -> list[str]:
    """Within and overall indices side by side when both fit, else one block under the other; a block
    too narrow for its bounds puts each bound on the line under its index.  Numbers are never cut."""
    rows = _index_rows(cap)
    blocks = []
    for side, head in ((0, "within"), (3, "overall")):
        body = [r[side:side + 3] for r in rows if r[side]]
        blocks.append([(head, "value", ci)] + body)
    laid = [_columns(b, (False, True, False)) for b in blocks]
    if all(max(len(x) for x in lines) <= width for lines in laid):
        left = max(len(x) for x in laid[0])
        if left + 2 + max(len(x) for x in laid[1]) <= width:
            both = [(a.ljust(left) + "  " + b).rstrip() for a, b in zip(laid[0] + [""] * len(laid[1]),
                                                                         laid[1])]
            return both
        return laid[0] + [""] + laid[1]
    out: list[str] = []
    for block in blocks:  # too narrow even for one block: the bound under its index
        for line, cells in zip(_columns([b[:2] for b in block], (False, True)), block):
            out += [line] + ([f"  {cells[2]}"] if cells[2] else [])
        out.append("")
    return out[:-1]


def _ppm_table(cap: Capability, width: int) -> list[str]:
    """The ppm table; when it does not fit, each row's figures go on the line under its name."""
    rows = [("ppm", "below LSL", "above USL", "total")] + _ppm_rows(cap)
    lines = _columns(rows, (False, True, True, True))
    if max(len(x) for x in lines) <= width:
        return lines
    out = ["ppm"]
    for name, below, above, total in rows[1:]:
        cells = [f"below LSL {below}", f"above USL {above}", f"total {total}"]
        one = "  " + " · ".join(cells)
        out += [name] + ([one] if len(one) <= width else [f"  {c}" for c in cells])
    return out


def capability_text(cap: Capability, width: int = 80) -> str:
    """The capability section for the terminal; no line is longer than ``width``."""
    width = max(int(width), 40)
    wrap = lambda t, ind="": textwrap.fill(t, width, initial_indent=ind, subsequent_indent=" " * len(ind))  # noqa: E731
    ci = f"{cap.ci_level * 100:g}% {'lower bound' if cap.ci_kind == 'lower' else 'interval'}"
    out = [TITLE, "\u2500" * min(len(TITLE), width), wrap(_spec_line(cap)),
           wrap(f"Method: {cap.method} \u2014 {cap.method_reason}."), wrap(_sigma_line(cap)), ""]
    out += _index_table(cap, ci, width)
    out += [""] + _ppm_table(cap, width)
    out.append("")
    if cap.normality is not None:
        out.append(wrap(f"Normality: {cap.normality.verdict} p-value: {cap.normality.ad_p_method}."))
    fit = _fit_line(cap)
    if fit:
        out.append(wrap(fit))
    out += [wrap(f"Verdict: {cap.verdict}"), wrap(cap.common_practice)]
    if cap.warnings:
        out += ["", "Warnings:"] + [wrap(w, "  ! ") for w in cap.warnings]
    out += ["", "Notes:"] + [wrap(c, "  - ") for c in cap.cautions]
    return "\n".join(out)


def capability_markdown(cap: Capability) -> str:
    """The capability section of the review document (Markdown)."""
    ci = f"{cap.ci_level * 100:g}% {'lower bound' if cap.ci_kind == 'lower' else 'interval'}"
    out = [f"### {TITLE}", "", f"- Specification: {_spec_line(cap)}",
           f"- Method: **{cap.method}** \u2014 {cap.method_reason}.", f"- {_sigma_line(cap)}", "",
           f"| Index | Value | {ci} | Index | Value | {ci} |", "|---|---:|---|---|---:|---|"]
    out += [f"| {a} | {va} | {ba} | {b} | {vb} | {bb} |" for a, va, ba, b, vb, bb in _index_rows(cap)]
    out += ["", "| ppm | below LSL | above USL | total |", "|---|---:|---:|---:|"]
    out += [f"| {r[0]} | {r[1]} | {r[2]} | {r[3]} |" for r in _ppm_rows(cap)]
    out.append("")
    if cap.normality is not None:
        out.append(f"- Normality: {cap.normality.verdict} (p-value: {cap.normality.ad_p_method}.)")
    fit = _fit_line(cap)
    if fit:
        out.append(f"- {fit}")
    out += [f"- **Verdict:** {cap.verdict}", f"- {cap.common_practice}"]
    if cap.warnings:
        out += ["", "**Warnings**", ""] + [f"- {w}" for w in cap.warnings]
    out += ["", "**Notes**", ""] + [f"- {c}" for c in cap.cautions]
    return "\n".join(out) + "\n"
