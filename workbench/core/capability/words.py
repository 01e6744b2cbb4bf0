"""Plain-words verdicts, warnings and cautions for a capability result (no statistics here)."""
from __future__ import annotations

import math

from workbench.core import text

SIGMA_RATIO_LIMIT = 1.33
"""sigma_overall / sigma_within above this (or below its inverse) draws a warning."""
SMALL_N = 30
"""Fewer readings than this draw a warning about wide confidence bounds."""
THRESHOLDS = (
    (1.00, "1.00 the bare minimum for a capable process"),
    (1.33, "1.33 the usual minimum for an existing process"),
    (1.67, "1.67 often asked for new or critical characteristics (Montgomery recommends 1.33 for "
           "existing processes, 1.50 for new ones, 1.67 for new ones on a critical parameter; two-sided)"),
    (2.00, "2.00 \u201csix sigma\u201d quality (Cpk 1.5, about 3.4 ppm, after the conventional 1.5\u03c3 shift)"),
)
ESTIMATES = ("Capability figures are estimates from a sample: they support, and do not replace, the "
             "customer's requirements, the quality system and local regulations.")

BOXCOX_SCALE = ("Box-Cox indices are computed on the transformed scale; for skewed data they can differ "
                "from percentile-method indices of the same readings, while the expected ppm agree more closely.")


def num(v: float | None) -> str:
    """An index, sigma or mean for prose and tables by the one formatting rule
    (:func:`workbench.core.text.num`); None or non-finite values read "n/a" (never "nan")."""
    if v is None or not math.isfinite(v):
        return "n/a"
    return text.num(v)


def ppm(v: float | None) -> str:
    """A ppm figure with sensible precision ("n/a" for None)."""
    if v is None or not math.isfinite(v):
        return "n/a"
    if v == 0:
        return "0"
    if v >= 1000:
        return f"{v:,.0f}"
    if v >= 1:
        return f"{v:.1f}"
    return f"{v:.2g}"


def _pair(a: float, b: float) -> tuple[str, str]:
    """Format two values so that different values never print alike (the one rule, more figures if needed)."""
    sa, sb = text.nums((a, b))
    return sa, sb


def verdict(name: str | None, value: float | None, ci: tuple[float, float] | None, required: float,
            level: float, kind: str, why_missing: str) -> tuple[str, bool | None, bool | None]:
    """The verdict against the required minimum, using the lower confidence bound too.

    Returns the text, whether the estimate meets the requirement and whether its lower bound does
    (None when there is no estimate / no bound).
    """
    if name is None or value is None:
        return f"No capability verdict: {why_missing}.", None, None
    pct = f"{level * 100:g}%"
    sv, sr = _pair(value, required)
    meets = value >= required
    low = ci[0] if ci is not None and math.isfinite(ci[0]) else None
    bound_words = (f"the lower end of its {pct} confidence interval" if kind == "two-sided"
                   else f"its {pct} lower confidence bound")
    if meets:
        head = f"{name} {sv} meets the required {sr}"
        if low is None:
            return f"{head} (no confidence bound is available for this method).", True, None
        sl, _ = _pair(low, required)
        if low >= required:
            return f"{head}, and {bound_words}, {sl}, does too.", True, True
        return (f"{head}, but {bound_words}, {sl}, does not: the requirement is not yet shown to be "
                "met with confidence (more readings narrow the bound).", True, False)
    text = f"{name} {sv} falls short of the required {sr}"
    high = ci[1] if ci is not None and math.isfinite(ci[1]) else None
    if high is not None and high < required:
        text += f"; even the upper end of its {pct} confidence interval, {_pair(high, required)[0]}, is below it"
    return text + ".", False, (None if low is None else low >= required)


def common_practice(name: str | None, value: float | None) -> str:
    """Where the headline index stands against the common thresholds 1.00 / 1.33 / 1.67 / 2.00."""
    text = "Common practice, not requirements: " + "; ".join(t for _, t in THRESHOLDS) + "."
    if name is None or value is None:
        return text
    reached = [t for t, _ in THRESHOLDS if value >= t]
    above = [t for t, _ in THRESHOLDS if value < t]
    if not reached:
        band = f"{name} {num(value)} is below the common 1.00."
    else:
        band = f"{name} {num(value)} reaches the common {reached[-1]:.2f}" + (
            f" but not {above[0]:.2f}." if above else ".")
    return f"{band} {text}"


def stability_warning(open_signals: int) -> str | None:
    """The stability gate: open signals mean the indices do not predict future output."""
    if open_signals <= 0:
        return None
    s = "signal remains" if open_signals == 1 else "signals remain"
    return (f"{open_signals} open {s}: the process is not shown to be in control, so these indices "
            "describe the readings so far and do not predict future output.")


def sigma_ratio_warning(ratio: float | None, method: str = "normal") -> str | None:
    """Warn when sigma_overall / sigma_within is outside [1/1.33, 1.33]."""
    if ratio is None or not math.isfinite(ratio):
        return None
    if ratio > SIGMA_RATIO_LIMIT:
        tail = ("; Ppk describes the readings as made, Cpk only the short-term potential."
                if method == "normal" else ".")
        return (f"\u03c3 overall is {ratio:.2f} \u00d7 \u03c3 within (more than {SIGMA_RATIO_LIMIT}\u00d7): "
                "a sign of variation between subgroups (shifts, drift or a poor subgrouping)" + tail)
    if ratio < 1.0 / SIGMA_RATIO_LIMIT:
        return (f"\u03c3 within is {1.0 / ratio:.2f} \u00d7 \u03c3 overall (more than {SIGMA_RATIO_LIMIT}\u00d7): "
                "unusual; check the subgrouping and the sigma estimator.")
    return None


def small_n_warning(n: int) -> str | None:
    if n >= SMALL_N:
        return None
    return (f"Only {n} readings (fewer than {SMALL_N}): the confidence bounds are wide and the "
            "indices uncertain.")


def interval_caution(method: str, sigma_label: str) -> str:
    """How the confidence bounds were obtained and what they assume."""
    if method == "percentile":
        return ("No confidence bounds are given for the percentile method: no published closed form "
                "applies to indices from fitted-distribution percentiles.")
    text = ("Confidence bounds: chi-square for Cp and Pp, Bissell's (1990) approximation for Cpk and "
            "Ppk, Boyles' (1991) approximation for Cpm; they assume independent normal readings")
    if method == "box-cox":
        return text + " on the transformed scale and treat \u03bb as known, so they are somewhat too narrow."
    return (text + f". The Cp and Cpk bounds use n \u2212 1 degrees of freedom although \u03c3 within "
            f"comes from the chart's estimator ({sigma_label}); treat them as approximate.")


def within_caution(method: str) -> str:
    """Why non-normal methods report only the overall (P) indices."""
    return (f"The {method} method reports only the overall indices (Pp, Ppl, Ppu, Ppk) and overall ppm: "
            "\u03c3 within comes from the chart's estimator on the original scale under a normal model "
            "and has no counterpart on the fitted model's scale.")


def resolution_warning(res, sigma_overall: float, sigma_interval: float | None) -> str | None:
    """The coarse-resolution warning and what coarse readings do to the indices (None when fine).

    Common practice: about ten or more resolution steps across the process spread (6σ) and a
    resolution of at most 1/10 of the tolerance.  Sheppard (1898): rounding to a step δ adds
    about δ²/12 to the variance of the readings.
    """
    if res is None or not res.coarse or res.step is None:
        return None
    d = f"{res.step:g}"
    why = []
    if res.steps_in_spread is not None and res.steps_in_spread < 10:
        why.append(f"only about {res.steps_in_spread:.0f} steps of {d} across the process spread (6\u03c3), "
                   "where common practice wants about 10 or more")
    if res.tolerance_share is not None and res.tolerance_share > 0.1:
        why.append(f"the step is 1/{1 / res.tolerance_share:.2g} of the tolerance, where common practice "
                   "wants 1/10 or finer")
    text = f"Coarse resolution: the readings step by {d} ({res.distinct} distinct values); " + " and ".join(why) + "."
    text += " Rounding adds about \u03b4\u00b2/12 to the variance of the readings"
    if sigma_interval and sigma_interval > 0 and sigma_overall > 0:
        low = 100.0 * (1.0 - sigma_interval / sigma_overall)
        text += (f" (\u03c3 overall {sigma_overall:.4g} from the readings against {sigma_interval:.4g} from the "
                 f"interval fit), so the P indices read about {low:.0f} % low")
    return text + ("; \u03c3 within from the ranges of coarse readings is unreliable (many ranges of 0 or one step), "
                   "and the expected ppm rests on the few cells in the tails. A finer gauge gives firmer figures.")
