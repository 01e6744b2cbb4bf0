"""Text pictures of a capability result: the specification strip and the normal quantile plot.

Both are plain text (one character a cell, no colour needed) so the fit view, the terminal
report and the Markdown report draw the same picture.  They share one horizontal scale when
drawn at the same width, so the strip reads as the axis of the quantile plot.
"""
from __future__ import annotations

import math

import numpy as np
from scipy import special, stats

from workbench.core.text import fmt, reading

SPEC = "\u2500"          # inside the specification
OUTSIDE = "\u254c"       # beyond a missing limit (one-sided specification)
WITHIN = "\u2593"        # ±3σ within
OVERALL = "\u2591"       # natural spread overall (±3σ, or the model's 0.135 %…99.865 %)
BEYOND = "\u2588"        # band cells beyond a limit
POINT = "\u25cf"         # readings (quantile plot)
LINE = "\u00b7"          # the fitted model's line
Z_TICKS = ((3.0, "99.865%"), (2.0, "97.7%"), (0.0, "50%"), (-2.0, "2.3%"), (-3.0, "0.135%"))
GUTTER = 8


def _num(v: float) -> str:
    return fmt(v)


def _given(v: float) -> str:
    """A limit or target as stated (all its digits, no trailing zeros)."""
    return reading(v)


def scale(cap, readings=None) -> tuple[float, float]:
    """The horizontal range shared by the strip and the plot: limits, bands and (optionally) readings."""
    vals = [v for v in (cap.lsl, cap.usl, cap.target, cap.mean) if v is not None]
    for lo, hi in bands(cap).values():
        vals += [lo, hi]
    if readings is not None and np.size(readings):
        r = np.asarray(readings, dtype=float)
        vals += [float(np.nanmin(r)), float(np.nanmax(r))]
    vals = [v for v in vals if v is not None and math.isfinite(v)]
    lo, hi = min(vals), max(vals)
    span = hi - lo if hi > lo else max(abs(hi), 1.0) * 0.1
    return lo - 0.04 * span, hi + 0.04 * span


def bands(cap) -> dict[str, tuple[float, float]]:
    """Natural spread: ±3σ within (normal method) and overall (±3σ, or the fitted model's 0.135 … 99.865 %)."""
    out = {}
    if cap.method == "normal" and cap.sigma_within:
        out["within"] = (cap.mean - 3 * cap.sigma_within, cap.mean + 3 * cap.sigma_within)
    if cap.percentiles is not None:
        out["overall"] = (cap.percentiles[0], cap.percentiles[2])
    elif cap.method == "box-cox" and cap.boxcox is not None:
        b = cap.boxcox
        q = special.inv_boxcox(np.array([b.mean_t - 3 * b.sd_t, b.mean_t + 3 * b.sd_t]), b.lam) - b.shift
        if np.all(np.isfinite(q)):
            out["overall"] = (float(q[0]), float(q[1]))
    elif cap.sigma_overall > 0:
        out["overall"] = (cap.mean - 3 * cap.sigma_overall, cap.mean + 3 * cap.sigma_overall)
    return out


class _Axis:
    def __init__(self, lo: float, hi: float, cols: int):
        self.lo, self.hi, self.cols = lo, hi, cols

    def col(self, v: float) -> int:
        return min(max(int((v - self.lo) / (self.hi - self.lo) * self.cols), 0), self.cols - 1)

    def value(self, j: int) -> float:
        return self.lo + (j + 0.5) * (self.hi - self.lo) / self.cols


def _place(row: list[str], col: int, text: str, align: str = "centre") -> bool:
    start = col - len(text) // 2 if align == "centre" else (col if align == "left" else col - len(text) + 1)
    start = min(max(start, 0), len(row) - len(text))
    if start < 0 or any(c != " " for c in row[max(start - 1, 0):start + len(text) + 1]):
        return False                      # keep a space between two labels
    row[start:start + len(text)] = list(text)
    return True


def spec_strip(cap, width: int = 80, unit: str | None = None, lo_hi: tuple[float, float] | None = None) -> str:
    """The specification drawn once with the within and overall natural spread as two bands.

    Rows: limit and target labels; the specification (``├──┼──┤``, ``╌`` where a limit is missing);
    the within band (±3σ within, normal method); the overall band (±3σ overall or the fitted model's
    0.135 %…99.865 % points); the mean.  A band cell beyond a limit is drawn solid.
    """
    width = max(int(width), 40)
    label_w = 9
    cols = width - label_w
    lo, hi = lo_hi or scale(cap)
    ax = _Axis(lo, hi, cols)
    u = f" {unit}" if unit else ""
    top = [" "] * cols
    line = [" "] * cols
    a = ax.col(cap.lsl) if cap.lsl is not None else 0
    b = ax.col(cap.usl) if cap.usl is not None else cols - 1
    for j in range(cols):
        line[j] = SPEC if a <= j <= b else " "
    if cap.lsl is None:
        line[:b + 1] = [OUTSIDE] * (b + 1)
    if cap.usl is None:
        line[a:] = [OUTSIDE] * (cols - a)
    marks = []
    if cap.lsl is not None:
        line[a] = "\u251c"
        marks.append((a, f"LSL {_given(cap.lsl)}"))
    if cap.usl is not None:
        line[b] = "\u2524"
        marks.append((b, f"USL {_given(cap.usl)}"))
    if cap.target is not None:
        t = ax.col(cap.target)
        line[t] = "\u253c"
        marks.append((t, f"T {_given(cap.target)}"))
    for j, text in sorted(marks, key=lambda m: m[1].startswith("T")):
        if not _place(top, j, text):
            _place(top, j, text.split(" ")[0])
    rows = [("", top), ("spec", line)]
    for name, (blo, bhi) in bands(cap).items():
        r = [" "] * cols
        for j in range(ax.col(blo), ax.col(bhi) + 1):
            v = ax.value(j)
            out = (cap.lsl is not None and v < cap.lsl) or (cap.usl is not None and v > cap.usl)
            r[j] = BEYOND if out else (WITHIN if name == "within" else OVERALL)
        rows.append((name, r))
    m = [" "] * cols
    mc = ax.col(cap.mean)
    m[mc] = "\u25b2"
    text = f"mean {_num(cap.mean)}{u}"
    if not _place(m, mc + 2, text, "left"):
        _place(m, mc - 2, text, "right")
    rows.append(("", m))
    return "\n".join((f"{name:<{label_w}}" + "".join(r)).rstrip() for name, r in rows)


def wrap_parts(parts: list[str], width: int | None) -> str:
    """``parts`` joined by two spaces, on as many lines of ``width`` as it takes: a line breaks between parts,
    never inside one (a legend is never cut)."""
    if width is None:
        return "  ".join(parts)
    lines, line = [], ""
    for part in parts:
        if line and len(line) + 2 + len(part) > width:
            lines.append(line)
            line = part
        else:
            line = f"{line}  {part}" if line else part
    lines.append(line)
    return "\n".join(lines)


def strip_legend(cap, width: int | None = None) -> str:
    """The glyphs of the strip in words (wrapped between whole parts to ``width``)."""
    parts = [f"{SPEC} specification"]
    b = bands(cap)
    if "within" in b:
        parts.append(f"{WITHIN} \u00b13\u03c3 within")
    if "overall" in b:
        parts.append(f"{OVERALL} " + ("\u00b13\u03c3 overall" if cap.method == "normal"
                                        else "0.135 %\u202699.865 % of the model"))
    parts.append(f"{BEYOND} beyond a limit")
    if cap.lsl is None or cap.usl is None:
        parts.append(f"{OUTSIDE} no limit")
    return wrap_parts(parts, width)


def plotting_positions(readings, step: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    """(x, z) of the normal quantile plot.

    Continuous readings: each ordered reading at Blom's position (i − 3/8)/(n + 1/4).  Rounded
    readings (``step`` given): one point per distinct reading, at the upper edge of its cell
    (x + δ/2) and the cumulative share of readings up to it (Blom's position of the cell's last
    reading), so the points do not pile up in columns.
    """
    x = np.sort(np.asarray(readings, dtype=float))
    x = x[np.isfinite(x)]
    n = x.size
    if n == 0:
        return np.empty(0), np.empty(0)
    if step:
        v, counts = np.unique(x, return_counts=True)
        cum = np.cumsum(counts)
        return v + step / 2.0, stats.norm.ppf((cum - 0.375) / (n + 0.25))
    i = np.arange(1, n + 1)
    return x, stats.norm.ppf((i - 0.375) / (n + 0.25))


def model_name(cap) -> str:
    """The model drawn: normal, Box-Cox normal, or the fitted distribution of the percentile method."""
    if cap.method == "percentile" and cap.fit is not None:
        return cap.fit.distribution
    return "Box-Cox normal" if cap.method == "box-cox" else "normal"


def model_z(cap, x: np.ndarray) -> np.ndarray:
    """Φ⁻¹ of the fitted model's distribution function at ``x`` (the model's line on the plot)."""
    from workbench.core.capability.censored import model_cdf
    x = np.asarray(x, dtype=float)
    if cap.sigma_overall <= 0:
        return np.full_like(x, np.nan)
    if cap.method == "box-cox" and cap.boxcox is not None:
        b = cap.boxcox
        cdf, _ = model_cdf("box-cox", {"lambda": b.lam, "mean": b.mean_t, "sd": b.sd_t}, x, b.shift)
    elif cap.method == "percentile" and cap.fit is not None:
        shift = 0.0 if cap.fit.distribution == "normal" else cap.fit.shift
        cdf, _ = model_cdf(cap.fit.distribution, dict(cap.fit.params), x, shift)
    else:
        return (x - cap.mean) / cap.sigma_overall
    with np.errstate(all="ignore"):
        return stats.norm.ppf(cdf)


def quantile_plot(cap, readings, width: int = 80, height: int = 12, unit: str | None = None,
                  lo_hi: tuple[float, float] | None = None, step: float | None = None) -> str:
    """Normal quantile plot: the readings (●) against normal probability, with the model's line (·).

    The vertical axis is normal probability (0.135 % … 99.865 % marked); on it a normal model is a
    straight line.  Points that bend away from the line at the ends show tails the model does not
    follow.  LSL and USL are marked on the horizontal axis.
    """
    width, height = max(int(width), 40), max(int(height), 6)
    label_w = 9
    cols = width - label_w
    lo, hi = lo_hi or scale(cap, readings)
    ax = _Axis(lo, hi, cols)
    zmax = 3.5
    grid = [[" "] * cols for _ in range(height)]

    def row_of(z: float) -> int:
        return min(max(int(round((zmax - z) / (2 * zmax) * (height - 1))), 0), height - 1)

    xs = np.array([ax.value(j) for j in range(cols)])
    zl = model_z(cap, xs)
    for j, z in enumerate(zl):
        if np.isfinite(z) and abs(z) <= zmax:
            grid[row_of(z)][j] = LINE
    px, pz = plotting_positions(readings, step)
    ok = np.isfinite(pz) & (np.abs(pz) <= zmax + 1)
    for xv, zv in zip(px[ok], pz[ok]):
        grid[row_of(float(np.clip(zv, -zmax, zmax)))][ax.col(float(xv))] = POINT
    labels = {row_of(z): t for z, t in Z_TICKS}
    lines = [f"{labels.get(r, ''):>{label_w - 1}}\u2502" + "".join(grid[r]).rstrip() for r in range(height)]
    axis = ["\u2500"] * cols
    under = [" "] * cols
    for v, name in ((cap.lsl, "LSL"), (cap.usl, "USL")):
        if v is not None and lo <= v <= hi:
            axis[ax.col(v)] = "\u2534"
            _place(under, ax.col(v), name)
    lines.append(" " * (label_w - 1) + "\u2514" + "".join(axis))
    left, right = _num(lo), _num(hi) + (f" {unit}" if unit else "")
    edge = [" "] * cols
    _place(edge, 0, left, "left")
    _place(edge, cols - 1, right, "right")
    lines.append(" " * label_w + "".join(under).rstrip())
    lines.append(" " * label_w + "".join(edge).rstrip())
    legend = wrap_parts([f"{POINT} readings", f"{LINE} {model_name(cap)} model", "(normal-probability axis)"], width)
    return "\n".join([line.rstrip()[:width] for line in lines] + legend.split("\n"))
