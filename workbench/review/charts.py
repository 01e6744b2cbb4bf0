"""Control charts as inline SVG, drawn by matplotlib's SVG backend (no display, no pyplot state).

Each chart shows the plotted statistic, the centre line and the control limits (stepped where they
vary), and the points of signals with the project's glyphs: a filled triangle for an open signal, a
diamond for one explained or with no cause found, an open circle for an excluded point.  Text in
the picture is drawn as paths, so nothing from the data can become markup; the SVG is cut to its
``<svg>`` element (no XML prologue, no document type, no metadata).
"""
from __future__ import annotations

import io
import re

import numpy as np

from workbench.core.model import Analysis

COLOURS = {"line": "#2a5d8f", "limit": "#b03a2e", "centre": "#1e8449", "open": "#c0392b", "answered": "#7d3c98",
           "excluded": "#566573"}
_STATE_GROUP = {"open": "open", "explained": "answered", "no-cause-found": "answered", "excluded": "excluded"}


def point_states(signals: list[dict]) -> dict[str, dict[int, str]]:
    """chart name -> {position: open | answered | excluded} from the report's signals (open wins)."""
    rank = {"open": 2, "answered": 1, "excluded": 0}
    out: dict[str, dict[int, str]] = {}
    for s in signals:
        group = _STATE_GROUP.get(s.get("state") or "open", "open")
        marks = out.setdefault(s["chart"].removesuffix("-"), {})
        for p in s.get("fired") or s.get("points") or []:
            if p not in marks or rank[group] > rank[marks[p]]:
                marks[p] = group
    return out


def chart_svgs(a: Analysis, signals: list[dict]) -> list[tuple[str, str]]:
    """(title, svg text) for each chart of the analysis."""
    from matplotlib import rc_context
    marks = point_states(signals)
    out = []
    with rc_context({"svg.fonttype": "path", "svg.hashsalt": "workbench-review", "font.size": 8,
                     "axes.spines.top": False, "axes.spines.right": False}):
        for c in a.charts:
            out.append((f"{c.name} · {c.title}", _one(a, c, marks.get(c.name, {}))))
    return out


def _one(a: Analysis, c, marks: dict[int, str]) -> str:
    from matplotlib.backends.backend_svg import FigureCanvasSVG
    from matplotlib.figure import Figure
    fig = Figure(figsize=(9.0, 2.6), layout="constrained")
    FigureCanvasSVG(fig)
    ax = fig.add_subplot()
    x = np.arange(len(c.values))
    y = np.asarray(c.values, dtype=float)
    ax.plot(x, y, color=COLOURS["line"], linewidth=0.8)
    for arr, key, style in ((c.center, "centre", "-"), (c.ucl, "limit", "--"), (c.lcl, "limit", "--")):
        arr = np.asarray(arr, dtype=float)
        if np.isfinite(arr).any():
            ax.step(x, arr, where="mid", color=COLOURS[key], linewidth=0.9, linestyle=style)
    ex = np.flatnonzero(np.asarray(c.excluded, bool))
    if ex.size:
        ax.scatter(x[ex], y[ex], s=28, facecolors="none", edgecolors=COLOURS["excluded"], linewidths=1.0, zorder=3)
    for group, marker in (("answered", "D"), ("open", "^")):
        pos = np.array(sorted(p for p, g in marks.items() if g == group and p < len(y)), dtype=int)
        if pos.size:
            ax.scatter(x[pos], y[pos], s=26, marker=marker, color=COLOURS[group], zorder=4)
    if a.phase2_start is not None:
        ax.axvline(a.phase2_start - 0.5, color="#333333", linewidth=0.8, linestyle=":")
    labels = a.dataset.labels
    ticks = np.linspace(0, len(x) - 1, num=min(6, len(x))).round().astype(int) if len(x) else []
    ax.set_xticks(ticks, [str(labels[i]) for i in ticks])
    ax.set_xlim(-0.5, max(len(x) - 0.5, 0.5))
    ax.grid(axis="y", linewidth=0.3, alpha=0.5)
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None, "Format": None, "Type": None})
    return _bare_svg(buf.getvalue())


def _bare_svg(text: str) -> str:
    start = text.index("<svg")
    svg = text[start:]
    svg = re.sub(r"<metadata>.*?</metadata>\s*", "", svg, flags=re.S)
    return svg.strip()
