"""The figures of a capability result as short statements, led by the verdict.

One composition for the fit view and the text and Markdown reports: the verdict, the specification,
each index with its confidence bound, the fallout as one sentence per side, the model and why,
the resolution and the size of any departure from normal.  Words only; every figure comes from the
``Capability`` result, and every figure the result holds is stated.
"""
from __future__ import annotations

import math

from workbench.core.capability.assess import Capability
from workbench.core.capability.method import DISPLAY
from workbench.core.capability.words import num, ppm
from workbench.core.model import SIGMA_METHOD_LABELS
from workbench.core.text import fmt, reading


def _u(v: float | None, unit: str | None, given: bool = False) -> str:
    """A statistic by the one formatting rule, or (``given``) a value as stated: limits, target, step."""
    if v is None or not math.isfinite(v):
        return "n/a"
    return (reading(v) if given else fmt(v)) + (f" {unit}" if unit else "")


def bound(ci: tuple[float, float] | None, kind: str, level: float) -> str:
    """" (95% interval 2.97 – 3.29)", " (95% lower bound 2.97)" or "" without a bound."""
    if ci is None or not math.isfinite(ci[0]):
        return ""
    pct = f"{level * 100:g}%"
    if kind == "lower" or not math.isfinite(ci[1]):
        return f" ({pct} lower bound {num(ci[0])})"
    return f" ({pct} interval {num(ci[0])} \u2013 {num(ci[1])})"


def _index(cap: Capability, name: str, label: str) -> str:
    return f"{label} {num(getattr(cap, name))}" + bound(getattr(cap, f"{name}_ci", None), cap.ci_kind, cap.ci_level)


def spec_statement(cap: Capability, unit: str | None = None, name: str | None = None) -> str:
    parts = [f"LSL {_u(cap.lsl, unit, True)}" if cap.lsl is not None else "no LSL",
             f"USL {_u(cap.usl, unit, True)}" if cap.usl is not None else "no USL"]
    if cap.target is not None:
        parts.append(f"target {_u(cap.target, unit, True)}" + ("" if cap.spec.target is not None else " (the midpoint)"))
    what = f" of {name}" if name else ""
    return (f"Specification{what}: " + ", ".join(parts) + f"; {cap.n} readings, mean {_u(cap.mean, unit)}; "
            f"required index at least {reading(cap.required)}.")


def index_statements(cap: Capability, unit: str | None = None) -> list[str]:
    """Within, overall and target statements; each bounded index with its bound."""
    label = SIGMA_METHOD_LABELS.get(cap.sigma_within_method, cap.sigma_within_method)
    within = (f"Within (\u03c3 {_u(cap.sigma_within, unit)} by {label}): " + _index(cap, "cpk", "Cpk") + ", "
              + _index(cap, "cp", "Cp") + f"; Cpl {num(cap.cpl)}, Cpu {num(cap.cpu)}.")
    if cap.method == "normal":
        spread = f"\u03c3 {_u(cap.sigma_overall, unit)}"
    elif cap.percentiles is not None:
        spread = (f"the {DISPLAY.get(cap.fit.distribution, cap.fit.distribution)} model's 0.135 % / 50 % / 99.865 % "
                  f"points {_u(cap.percentiles[0], unit)} / {_u(cap.percentiles[1], unit)} / "
                  f"{_u(cap.percentiles[2], unit)}; \u03c3 of the readings {_u(cap.sigma_overall, unit)}")
    else:
        b = cap.boxcox
        spread = (f"on the Box-Cox scale, \u03bb {b.lam:.4g}: mean {fmt(b.mean_t)}, \u03c3 {fmt(b.sd_t)}; "
                  f"\u03c3 of the readings {_u(cap.sigma_overall, unit)}")
    ratio = f", {num(cap.sigma_ratio)} \u00d7 \u03c3 within" if cap.sigma_ratio is not None else ""
    overall = (f"Overall ({spread}{ratio}): " + _index(cap, "ppk", "Ppk") + ", " + _index(cap, "pp", "Pp")
               + f"; Ppl {num(cap.ppl)}, Ppu {num(cap.ppu)}.")
    tgt = f" against the target {_u(cap.target, unit, True)}" if cap.target is not None else ""
    centre = f"; centring k {num(cap.k)}" if cap.k is not None else "; centring k n/a"
    return [within, overall, _index(cap, "cpm", "Cpm") + tgt + centre + "."]


def _count(cap: Capability, share_ppm: float | None) -> str:
    if share_ppm is None:
        return "n/a"
    return f"{round(share_ppm * cap.n / 1e6):d} of {cap.n}"


def fallout_statements(cap: Capability, unit: str | None = None) -> list[str]:
    """One sentence per side of the specification, and one for both together."""
    obs, w, o = cap.ppm_observed, cap.ppm_within, cap.ppm_overall
    model = "overall" if cap.method == "normal" else f"from the {cap.method} model"
    out = []
    for side, limit, attr in (("Below the LSL", cap.lsl, "below"), ("Above the USL", cap.usl, "above")):
        if limit is None:
            continue
        ob = getattr(obs, attr)
        exp_w = ppm(getattr(w, attr)) if w is not None else "n/a"
        exp_o = ppm(getattr(o, attr)) if o is not None else "n/a"
        out.append(f"{side} ({_u(limit, unit, True)}): {_count(cap, ob)} readings observed ({ppm(ob)} ppm); expected "
                   f"{exp_w} ppm within and {exp_o} ppm {model}.")
    out.append(f"In all: {ppm(obs.total)} ppm observed; expected {ppm(w.total) if w else 'n/a'} ppm within and "
               f"{ppm(o.total) if o else 'n/a'} ppm {model}.")
    return out


def resolution_statement(cap: Capability, unit: str | None = None) -> str | None:
    r = cap.resolution
    if r is None:
        return None
    if r.step is None:
        return f"Resolution: no reading grid found ({r.distinct} distinct readings); the readings are taken as exact."
    parts = [f"{r.distinct} distinct values"]
    if r.step_over_sigma is not None:
        parts.append(f"\u03b4 = {r.step_over_sigma:.2g}\u03c3, about {r.steps_in_spread:.0f} steps across 6\u03c3")
    if r.tolerance_share is not None:
        parts.append(f"1/{1 / r.tolerance_share:.3g} of the tolerance")
    text = f"Resolution: readings step by {_u(r.step, unit, True)} (" + "; ".join(parts) + ")"
    if r.rounded:
        text += "; models are fitted to each reading as the interval x \u00b1 \u03b4/2"
    return text + (" \u2014 coarse (see the warnings)." if r.coarse else ".")


def departure_statement(cap: Capability, unit: str | None = None) -> str | None:
    d = cap.departure
    if d is None:
        return None
    m = DISPLAY.get(d.model, d.model)
    text = (f"Departure from normal: the {m} model's 0.135 % and 99.865 % points lie {_u(d.low, unit)} and "
            f"{_u(d.high, unit)} from the normal model's")
    if d.share is None:
        return text + "."
    room = "the tolerance" if d.basis == "tolerance" else "twice the distance from the mean to the limit"
    return text + (f", {100 * d.share:.2g} % of {room}: "
                   + ("large enough to matter" if d.matters else "too small to matter")
                   + f" (the threshold is {100 * d.threshold:g} %).")


def fit_statement(cap: Capability) -> str | None:
    fit = cap.fit
    if fit is None:
        return None
    params = ", ".join(f"{k} {v:.4g}" for k, v in fit.params)
    how = " (interval-censored fits)" if fit.step is not None else ""
    text = f"Fitted models{how}: {fit.distribution} ({params}), AIC {fit.aic:.1f}"
    if fit.runner_up:
        lower = fit.runner_up_aic < fit.aic   # the chosen model was asked for, not picked by AIC
        text += f"; {'best alternative' if lower else 'runner-up'} {fit.runner_up}, AIC {fit.runner_up_aic:.1f}"
    return text + (f"; not fitted: {'; '.join(fit.skipped)}" if fit.skipped else "") + "."


def statements(cap: Capability, unit: str | None = None, name: str | None = None) -> list[tuple[str, str]]:
    """(kind, sentence) pairs in reading order: verdict first, warnings and notes last.

    Kinds: verdict, spec, index, fallout, model, normality, fit, resolution, departure, practice,
    warning, note.
    """
    out = [("verdict", f"Verdict: {cap.verdict}"), ("spec", spec_statement(cap, unit, name)),
           ("model", f"Method: {cap.method} \u2014 {cap.method_reason}.")]
    out += [("index", s) for s in index_statements(cap, unit)]
    out += [("fallout", s) for s in fallout_statements(cap, unit)]
    if cap.normality is not None:
        out.append(("normality", f"Normality: {cap.normality.verdict} (A² p-value: {cap.normality.ad_p_method}.)"))
    for kind, s in (("fit", fit_statement(cap)), ("resolution", resolution_statement(cap, unit)),
                    ("departure", departure_statement(cap, unit))):
        if s:
            out.append((kind, s))
    out.append(("practice", cap.common_practice))
    out += [("warning", w) for w in cap.warnings]
    out += [("note", c) for c in cap.cautions]
    return out
