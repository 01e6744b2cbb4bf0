"""The fit view's histogram: readings, LSL / USL / target and the fitted curve (built in a worker)."""
from __future__ import annotations

import numpy as np
from rich.text import Text
from textual_plotext import PlotextPlot
from textual_plotext.plot import Plot

from workbench.tui.plotting import CENTRE, LIMIT, LINE, short

SPEC = (255, 85, 60)


class FitPlot(PlotextPlot):
    """Shows a finished picture (or a placeholder)."""

    def __init__(self, **kw) -> None:
        super().__init__(**kw)
        self.picture: Text | None = None

    def show(self, picture: Text | None) -> None:
        self.picture = picture
        self.refresh()

    def render(self) -> Text:
        return self.picture if self.picture is not None else Text("drawing…", style="dim")


def fit_picture(cap, readings: np.ndarray, width: int, height: int) -> Text:
    """Histogram of ``readings`` with the specification lines and ``density_curve(cap, x)`` scaled to counts."""
    from workbench.core.capability.assess import density_curve
    x = np.asarray(readings, float)
    x = x[np.isfinite(x)]
    width, height = max(int(width), 30), max(int(height), 8)
    marks = [v for v in (cap.lsl, cap.usl, cap.target) if v is not None]
    lo = float(min([x.min()] + marks)) if x.size else 0.0
    hi = float(max([x.max()] + marks)) if x.size else 1.0
    span = hi - lo if hi > lo else 1.0
    lo, hi = lo - 0.05 * span, hi + 0.05 * span
    bins = int(max(8, min(width // 2, 2 * round(x.size ** (1 / 3)) + 4))) if x.size else 8
    counts, edges = np.histogram(x, bins=bins, range=(lo, hi))
    centres = (edges[:-1] + edges[1:]) / 2
    plt = Plot()
    plt.plotsize(width, height)
    plt._set_size(width, height)
    plt.theme("clear")
    plt.bar(centres.tolist(), counts.tolist(), width=1.0, color=LINE, marker="sd")
    grid = np.linspace(lo, hi, max(2 * width, 50))
    with np.errstate(all="ignore"):
        dens = density_curve(cap, grid) * x.size * (edges[1] - edges[0])
    ok = np.isfinite(dens)
    if ok.any():
        plt.plot(grid[ok].tolist(), dens[ok].tolist(), marker="braille", color=LIMIT)
    ticks, names = [], []
    for v, word, colour in ((cap.lsl, "LSL", SPEC), (cap.target, "T", CENTRE), (cap.usl, "USL", SPEC)):
        if v is not None:
            plt.vline(v, color=colour)
            ticks.append(v)
            names.append(f"{word} {short(v)}")
    plt.xticks(ticks, names)
    top = float(max(counts.max() if counts.size else 1, np.nanmax(dens[ok]) if ok.any() else 0))
    plt.ylim(0, top * 1.1 or 1)
    plt.xlim(lo, hi)
    return Text.from_ansi(plt.build(), no_wrap=True, end="")
