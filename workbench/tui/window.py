"""The visible window of subgroups and what of it is drawn (pure numpy, O(window)).

A window of ``n`` subgroups is drawn on ``cols`` plot columns.  With ``n <= cols`` every
subgroup gets a column of its own (spread over the width); with more subgroups than columns
each column shows the min/max envelope of its subgroups, and every flagged point (open,
reviewed, excluded) is kept — the extreme flagged values of each class in each column.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from workbench.tui.view import EXCLUDED, NORMAL, OPEN, REVIEWED


@dataclass(frozen=True)
class Window:
    """Subgroup positions ``start`` .. ``stop - 1``."""

    start: int
    stop: int

    @property
    def size(self) -> int:
        return self.stop - self.start

    def contains(self, position: int) -> bool:
        return self.start <= position < self.stop


def window_at(start: int, size: int, m: int) -> Window:
    """A window of ``size`` subgroups starting near ``start``, kept inside 0 .. m."""
    size = max(1, min(int(size), m))
    start = max(0, min(int(start), m - size))
    return Window(start, start + size)


def follow(win: Window, position: int, m: int) -> Window:
    """The window moved so that it shows ``position``: by half its size when the position is just
    outside it (stepping along), else centred on the position (a jump)."""
    if win.contains(position):
        return win
    half = max(1, win.size // 2)
    if win.stop <= position < win.stop + half:
        start = win.start + half
    elif win.start - half <= position < win.start:
        start = win.start - half
    else:
        start = position - win.size // 2
    return window_at(start, win.size, m)


def column_of(position: int, win: Window, cols: int) -> int:
    """Plot column (0 .. cols-1) that shows ``position``."""
    n, off = win.size, position - win.start
    if n <= cols:
        return 0 if n == 1 else int(round(off * (cols - 1) / (n - 1)))
    return int(off * cols // n)


def position_of(col: int, win: Window, cols: int, codes: np.ndarray | None = None) -> int:
    """The subgroup a click on plot column ``col`` selects.

    When a column holds several subgroups, the first flagged one (by ``codes``) is chosen,
    else the middle one.
    """
    col = max(0, min(int(col), cols - 1))
    n = win.size
    if n <= cols:
        return win.start + (0 if n == 1 else int(round(col * (n - 1) / (cols - 1))))
    lo = -(-col * n // cols)
    hi = -(-(col + 1) * n // cols)
    if codes is not None:
        flagged = np.flatnonzero(np.asarray(codes[win.start + lo:win.start + hi]) != NORMAL)
        if flagged.size:
            return win.start + lo + int(flagged[0])
    return win.start + (lo + hi - 1) // 2


def first_position(col: int, win: Window, cols: int) -> int:
    """The first subgroup shown in plot column ``col`` (for axis labels)."""
    col = max(0, min(int(col), cols - 1))
    n = win.size
    if n <= cols:
        return position_of(col, win, cols)
    return win.start + -(-col * n // cols)


@dataclass(frozen=True, eq=False)
class Trace:
    """What one chart draws in one window, in plot-column coordinates."""

    line_x: np.ndarray
    line_y: np.ndarray
    """The series (envelope mode: min and max of each column, alternating)."""
    glyphs: dict[int, tuple[np.ndarray, np.ndarray]]
    """Point class -> (columns, values) of the points drawn with that class's glyph."""
    envelope: bool
    """True when columns hold more than one subgroup."""
    lo: float
    hi: float
    """Finite range of the values drawn (NaN when none)."""


def _columns(win: Window, cols: int) -> np.ndarray:
    n = win.size
    if n <= cols:
        return np.round(np.arange(n) * (cols - 1) / max(n - 1, 1)).astype(np.int64)
    return (np.arange(n, dtype=np.int64) * cols) // n


def trace(values: np.ndarray, codes: np.ndarray, win: Window, cols: int) -> Trace:
    """The trace of ``values`` in ``win`` on ``cols`` columns (flagged points always kept)."""
    v = np.asarray(values[win.start:win.stop], dtype=float)
    k = np.asarray(codes[win.start:win.stop])
    col = _columns(win, cols)
    ok = np.isfinite(v)
    glyphs: dict[int, tuple[np.ndarray, np.ndarray]] = {}
    if win.size <= cols:
        lx, ly = col[ok], v[ok]
        for cls in (NORMAL, REVIEWED, EXCLUDED, OPEN):
            sel = ok & (k == cls)
            if sel.any():
                glyphs[cls] = (col[sel], v[sel])
        envelope = False
    else:
        starts = np.flatnonzero(np.r_[True, col[1:] != col[:-1]])
        vmin = np.fmin.reduceat(np.where(ok, v, np.inf), starts)
        vmax = np.fmax.reduceat(np.where(ok, v, -np.inf), starts)
        good = np.isfinite(vmin)
        c = col[starts][good]
        lx = np.repeat(c, 2)
        ly = np.column_stack([vmin[good], vmax[good]]).ravel()
        for cls in (REVIEWED, EXCLUDED, OPEN):
            idx = np.flatnonzero(ok & (k == cls))
            if idx.size == 0:
                continue
            cc, vv = col[idx], v[idx]
            first = np.flatnonzero(np.r_[True, cc[1:] != cc[:-1]])
            lo_v, hi_v = np.minimum.reduceat(vv, first), np.maximum.reduceat(vv, first)
            cu = cc[first]
            xs = np.concatenate([cu, cu[hi_v != lo_v]])
            ys = np.concatenate([lo_v, hi_v[hi_v != lo_v]])
            glyphs[cls] = (xs, ys)
        envelope = True
    if ly.size:
        lo, hi = float(np.min(ly)), float(np.max(ly))
    else:
        lo = hi = float("nan")
    return Trace(lx, ly, glyphs, envelope, lo, hi)


def limit_trace(limit: np.ndarray, win: Window, cols: int, kind: str) -> float | tuple[np.ndarray, np.ndarray] | None:
    """A limit in the window: one number when constant, else (columns, values); None when undefined.

    ``kind`` picks the value of a column holding several subgroups: ``max`` (upper limit),
    ``min`` (lower limit) or ``first`` (centre line).
    """
    a = np.asarray(limit[win.start:win.stop], dtype=float)
    ok = np.isfinite(a)
    if not ok.any():
        return None
    f = a[ok]
    if ok.all() and np.all(f == f[0]):
        return float(f[0])
    col = _columns(win, cols)
    if win.size <= cols:
        return col[ok], a[ok]
    starts = np.flatnonzero(np.r_[True, col[1:] != col[:-1]])
    if kind == "max":
        vals = np.fmax.reduceat(np.where(ok, a, -np.inf), starts)
    elif kind == "min":
        vals = np.fmin.reduceat(np.where(ok, a, np.inf), starts)
    else:
        vals = a[starts]
    good = np.isfinite(vals)
    return col[starts][good], vals[good]
