"""A small plotext chart of every stream's readings around one subgroup (built in a worker)."""
from __future__ import annotations

import numpy as np
from rich.text import Text
from textual_plotext.plot import Plot

from workbench.core.model import Dataset

from workbench.tui.plotting import PHASE, short, tick_layout
from workbench.tui.view import safe

NEIGHBOURS = 10
"""Subgroups drawn on each side of the selected one."""
PALETTE = ((120, 120, 130), (105, 115, 140), (125, 110, 125), (110, 130, 120), (135, 125, 105))
HIGHLIGHT = (255, 200, 60)


def neighbourhood_text(ds: Dataset, p: int, row: int, width: int, height: int) -> Text:
    """Readings of each stream over p ± NEIGHBOURS; the stream at ``row`` highlighted.

    Count data show each stream's rate (count / size, or the count when there are no sizes)."""
    lo, hi = max(0, p - NEIGHBOURS), min(ds.m, p + NEIGHBOURS + 1)
    if ds.values is not None:
        block = ds.values[lo:hi]
    elif ds.counts is not None:
        counts = np.asarray(ds.counts[lo:hi], dtype=float)
        if ds.sizes is None:
            block = counts
        else:
            sizes = np.asarray(ds.sizes[lo:hi], dtype=float)
            with np.errstate(invalid="ignore", divide="ignore"):
                block = np.where(sizes > 0, counts / sizes, np.nan)
        block = block.reshape(hi - lo, -1)
    else:
        return Text("summary data: no readings per stream", style="dim")
    width, height = max(width, 30), max(height, 6)
    x = list(range(lo, hi))
    plt = Plot()
    plt.plotsize(width, height)
    plt._set_size(width, height)
    plt.theme("clear")
    order = [j for j in range(ds.k) if j != row] + ([row] if 0 <= row < ds.k else [])
    for j in order:
        col = block[:, j]
        ok = np.isfinite(col)
        if not ok.any():
            continue
        xs = [x[i] for i in np.flatnonzero(ok)]
        plt.plot(xs, col[ok].tolist(), marker="braille", color=HIGHLIGHT if j == row else PALETTE[j % len(PALETTE)])
        if j == row:
            plt.scatter(xs, col[ok].tolist(), marker="●", color=HIGHLIGHT)
    plt.vline(p, color=PHASE)
    finite = block[np.isfinite(block)]
    if finite.size:
        ticks = [float(finite.min()), float(finite.max())]
        plt.yticks(ticks, [short(v) for v in ticks])
    cols = width - 8
    span = hi - lo

    def label_at(c: int) -> str:
        return safe(ds.labels[lo + min(span - 1, int(round(c * (span - 1) / max(cols - 1, 1))))])

    cpos, names = tick_layout(cols, label_at, most=4)
    plt.xticks([lo - 0.5 + (c + 0.5) * span / cols for c in cpos], names)
    plt.xlim(lo - 0.5, hi - 0.5)
    text = Text.from_ansi(plt.build(), no_wrap=True, end="")
    if 0 <= row < ds.k:
        note = Text(f" {safe(ds.streams[row])} highlighted ", style="bold")
        first = text.plain.find("┌")
        if first >= 0 and len(note) < width - first - 4:
            text = text[:first + 2] + note + text[first + 2 + len(note):]
    return text
