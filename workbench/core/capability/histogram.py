"""A plain-text histogram of the readings with the specification limits and target marked."""
from __future__ import annotations

import math

import numpy as np

FULL = "\u2588"          # reading inside the specification
PARTS = " \u2581\u2582\u2583\u2584\u2585\u2586\u2587"  # eighths for the top of an in-spec bar
OUTSIDE = "\u2593"       # reading outside the specification
EXCLUDED = "\u2591"      # excluded reading (stacked on top)
LIMIT = "\u2502"         # LSL / USL line
TARGET = "\u250a"        # target line
MIN_WIDTH = 24


def _clean(a) -> np.ndarray:
    if a is None:
        return np.empty(0)
    a = np.asarray(a, dtype=float).ravel()
    return a[np.isfinite(a)]


def _label_rows(marks: list[tuple[int, str]], width: int, offset: int) -> list[str]:
    """Place labels centred under their columns on as few rows as needed (at most two)."""
    rows: list[list[str]] = [[" "] * width, [" "] * width]
    ends = [-1, -1]
    for col, text in sorted(marks):
        start = min(max(offset + col - len(text) // 2, 0), width - len(text))
        r = 0 if start > ends[0] else 1
        if start <= ends[r]:
            start = ends[r] + 1
        if start + len(text) > width:
            continue
        rows[r][start:start + len(text)] = list(text)
        ends[r] = start + len(text)
    return ["".join(r).rstrip() for r in rows if "".join(r).strip()]


def text_histogram(readings, lsl: float | None, usl: float | None, target: float | None,
                   width: int = 60, height: int = 12, excluded=None) -> str:
    """Histogram of ``readings`` (and stacked ``excluded`` readings) with LSL / USL / target lines.

    ``width`` is the full line width in characters (every line fits in it; at least 24);
    ``height`` the number of bar rows.  Glyphs: full block = reading inside the specification
    (eighth blocks for the top), dark shade = outside it, light shade = excluded, a solid line
    for LSL / USL and a dotted line for the target where no bar covers them.
    """
    x, ex = _clean(readings), _clean(excluded)
    if x.size + ex.size == 0:
        return "(no readings to draw)"
    width, height = max(int(width), MIN_WIDTH), max(int(height), 2)
    marks_v = [v for v in (lsl, usl, target) if v is not None and math.isfinite(v)]
    allv = np.concatenate([x, ex, np.asarray(marks_v, dtype=float)])
    lo, hi = float(allv.min()), float(allv.max())
    span = hi - lo if hi > lo else max(abs(hi), 1.0) * 0.1
    lo, hi = lo - 0.03 * span, hi + 0.03 * span
    gutter = len(str(x.size + ex.size)) + 2
    cols = width - gutter
    edges = np.linspace(lo, hi, cols + 1)
    inc = np.histogram(x, bins=edges)[0]
    exc = np.histogram(ex, bins=edges)[0] if ex.size else np.zeros(cols, dtype=int)
    tot = inc + exc
    top = int(tot.max())
    mids = (edges[:-1] + edges[1:]) / 2.0
    outside = np.zeros(cols, dtype=bool)
    if lsl is not None:
        outside |= mids < lsl
    if usl is not None:
        outside |= mids > usl

    def col_of(v: float) -> int:
        return min(max(int((v - lo) / (hi - lo) * cols), 0), cols - 1)

    grid = [[" "] * cols for _ in range(height)]
    for j in range(cols):
        if tot[j] == 0:
            continue
        e_tot = max(1, round(tot[j] / top * height * 8))
        if exc[j] == 0 and not outside[j]:
            for r in range(height):
                fill = min(max(e_tot - 8 * r, 0), 8)
                if fill:
                    grid[r][j] = FULL if fill == 8 else PARTS[fill]
            continue
        cells_tot = max(1, math.ceil(e_tot / 8))
        cells_inc = 0 if inc[j] == 0 else min(cells_tot, max(1, round(inc[j] / top * height)))
        if exc[j] and cells_inc == cells_tot:
            cells_inc = cells_tot - 1 if cells_tot > 1 else cells_inc
        for r in range(cells_tot):
            grid[r][j] = (OUTSIDE if outside[j] else FULL) if r < cells_inc else EXCLUDED
    marks: list[tuple[int, str]] = []
    for v, glyph, name in ((lsl, LIMIT, "LSL"), (usl, LIMIT, "USL"), (target, TARGET, "T")):
        if v is None or not math.isfinite(v):
            continue
        j = col_of(v)
        marks.append((j, name))
        for r in range(height):
            if grid[r][j] == " ":
                grid[r][j] = glyph
    lines = []
    for r in range(height - 1, -1, -1):
        label = str(top) if r == height - 1 else ""
        lines.append(f"{label:>{gutter - 2}} \u2502" + "".join(grid[r]).rstrip())
    axis = ["\u2500"] * cols
    for j, _ in marks:
        axis[j] = "\u2534"
    lines.append(f"{'0':>{gutter - 2}} \u2514" + "".join(axis))
    lines += _label_rows(marks, width, gutter)
    left, right = f"{lo:.4g}", f"{hi:.4g}"
    lines.append(" " * gutter + left + " " * max(1, cols - len(left) - len(right)) + right)
    legend = [f"{FULL} in spec"]
    if outside.any() and tot[outside].any():
        legend.append(f"{OUTSIDE} outside spec")
    if ex.size:
        legend.append(f"{EXCLUDED} excluded")
    names = "/".join(n for v, n in ((lsl, "LSL"), (usl, "USL")) if v is not None)
    if names:
        legend.append(f"{LIMIT} {names}")
    if target is not None:
        legend.append(f"{TARGET} target")
    lines.append(("  ".join(legend))[:width])
    return "\n".join(line[:width] for line in lines)
