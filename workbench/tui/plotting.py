"""Drawing one control chart window with plotext (runs in a worker thread, returns rich Text).

Each build uses a fresh ``textual_plotext`` figure, so builds never share state; the result
carries the canvas geometry so the widget can draw the cursor column without rebuilding.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import io

from rich.console import Console
from rich.text import Text
from textual.strip import Strip
from textual_plotext.plot import Plot

import plotext._utility as _plotext_utility

from workbench.tui.view import EXCLUDED, NORMAL, OPEN, REVIEWED, safe
from workbench.tui.window import Trace, Window, column_of, first_position, limit_trace, trace

def _no_duplicates(data):
    """Order-preserving de-duplication: plotext's own uses a set, whose order follows the per-process
    string hash seed, so the same chart could draw differently from one run to the next."""
    return list(dict.fromkeys(data))


_plotext_utility.no_duplicates = _no_duplicates

# The project's own glyphs and colours (RGB, so terminal themes do not remap them).
GLYPH = {NORMAL: "•", OPEN: "▲", REVIEWED: "◆", EXCLUDED: "○"}
COLOUR = {NORMAL: (205, 210, 220), OPEN: (255, 85, 60), REVIEWED: (70, 170, 255), EXCLUDED: (150, 150, 150)}
LINE = (110, 135, 165)
LIMIT = (235, 170, 50)
CENTRE = (95, 200, 130)
PHASE = (190, 120, 255)
SELECTED = (120, 170, 255)
"""The ends of a selected range of subgroups."""
LOWER_LINE = (70, 185, 190)
"""The lower side of a two-sided chart (the CUSUM's −C⁻), drawn below the centre line."""
LOWER_GLYPH = "·"
"""A point of the lower side that is in control (flagged ones take their class's glyph)."""
CHANGE = (255, 210, 90)
CHANGE_GLYPH = "┊"
"""Where a sustained shift most likely began (a signal's change point): a dotted column under the points,
unlike the solid line of Phase II, so it reads without colour too."""
LEGEND = (("open signal", OPEN), ("explained / no cause", REVIEWED), ("excluded", EXCLUDED))


@dataclass(frozen=True, eq=False)
class ChartData:
    """The series of one chart (arrays shared with the analysis, never copied)."""

    name: str
    title: str
    values: np.ndarray
    center: np.ndarray
    lcl: np.ndarray
    ucl: np.ndarray
    codes: np.ndarray
    lower: np.ndarray | None = None
    """A second series drawn against the LCL (the CUSUM's −C⁻), or None."""
    lower_codes: np.ndarray | None = None
    """Point classes of ``lower`` (flagged only where that side signalled)."""
    changes: np.ndarray | None = None
    """Sorted positions where a sustained shift most likely began (drawn as CHANGE_GLYPH columns)."""


MEASURED = ("xbar", "r", "s", "i", "mr", "ewma", "cusum")
"""Charts whose values are in the readings' unit (count charts plot proportions and counts)."""


def chart_data(c, codes: np.ndarray, unit: str | None = None, changes: np.ndarray | None = None) -> ChartData:
    """The series of a ChartResult to draw; a CUSUM gets −C⁻ as its lower series, and each side
    shows the flags of the points where that side is beyond H.  ``unit`` (the characteristic's, e.g.
    "fill volume, mL") is added to the title of charts in the readings' unit; ``changes`` are the chart's
    change points (see ChartData)."""
    what = f" · {unit}" if unit and c.name in MEASURED else ""
    if c.name == "cusum" and "cusum-" in c.extra:
        cp, cm = np.asarray(c.values, float), np.asarray(c.extra["cusum-"], float)
        with np.errstate(invalid="ignore"):
            up, down = cp > c.ucl, cm > -c.lcl
        flagged = (codes == OPEN) | (codes == REVIEWED)
        upper = np.where(flagged & down & ~up, NORMAL, codes).astype(codes.dtype)
        lower = np.where(flagged & down, codes, NORMAL).astype(codes.dtype)
        return ChartData(c.name, f"{c.name} · {c.title}{what} · C⁺ above, −C⁻ below", cp, c.center, c.lcl, c.ucl,
                         upper, -cm, lower, changes)
    return ChartData(c.name, f"{c.name} · {c.title}{what}", c.values, c.center, c.lcl, c.ucl, codes,
                     changes=changes)


@dataclass(frozen=True, eq=False)
class Picture:
    """A built chart: its lines as strips, and where its canvas lies in them."""

    strips: tuple[Strip, ...]
    """One strip per line, ready for the compositor (built in the worker)."""
    plain: tuple[str, ...]
    """The same lines as plain text (for tests and reading)."""
    left: int
    """Column of the first canvas cell."""
    cols: int
    top: int
    """Line of the first canvas row."""
    rows: int
    window: Window
    width: int
    height: int
    token: int


def rgb(colour: tuple[int, int, int]) -> str:
    """A rich colour string for an RGB triple."""
    return "rgb({},{},{})".format(*colour)


def tick_layout(cols: int, label_at, most: int = 8) -> tuple[list[int], list[str]]:
    """Tick columns and labels that fit ``cols`` without touching: each label is centred on its tick
    (plotext's placement), the first starts at the left edge and the last ends at the right edge."""
    width = min(max(len(label_at(0)), len(label_at(cols - 1)), 4), 20)
    n = max(2, min(most, (cols + 2) // (width + 2)))
    room = max(4, min(width, cols // n - 2))
    half = room // 2
    pos = sorted({int(round(half + i * (cols - 1 - 2 * half) / (n - 1))) for i in range(n)})
    return pos, [fit_label(label_at(p), room) for p in pos]


def fit_label(label: str, room: int) -> str:
    """``label`` in ``room`` cells: whole, else its last space-separated parts (the time of a
    timestamp), else its end."""
    if len(label) <= room:
        return label
    parts = label.split(" ")
    for i in range(1, len(parts)):
        tail = " ".join(parts[i:])
        if len(tail) <= room:
            return tail
    return label[-room:]


def short(v: float) -> str:
    """A value for an axis or a label: the one formatting rule (:func:`workbench.core.text.num`)."""
    from workbench.core.text import num
    return num(v)


def axis_labels(data: ChartData, win: Window, cols: int) -> list[tuple[float, str]]:
    """(value, label) for the centre line and limits of one chart in one window; the three values
    get as many significant figures as it takes to tell them apart (the one formatting rule)."""
    from workbench.core.text import nums
    found = []
    for word, arr, kind in (("UCL", data.ucl, "max"), ("CL", data.center, "first"), ("LCL", data.lcl, "min")):
        lim = limit_trace(arr, win, cols, kind)
        if lim is None:
            continue
        value = lim if isinstance(lim, float) else float(lim[1][-1])
        found.append((word, value, "" if isinstance(lim, float) else "~"))
    texts = nums(v for _, v, _ in found)
    return [(value, f"{word}{'~' if sep else ' '}{text}") for (word, value, sep), text in zip(found, texts)]


def label_width(charts: list[ChartData], win: Window, cols: int) -> int:
    return max([len(t) for c in charts for _, t in axis_labels(c, win, cols)] + [6])


REACH = 1.5
"""The y axis shows at most this many limit-band widths beyond the limits; wilder points are drawn
clipped at the frame edge, so one outlier cannot squeeze the limit lines onto one row."""


PAD = 0.12
"""Share of the y span added above and below, so limit lines do not sit on the frame."""
LINE_ROWS = 2.5
"""The limit band (LCL to UCL) spans at least this many rows, so LCL, CL and UCL fall on rows of their own."""


def reach_for(rows: int) -> float:
    """How many limit-band widths the y axis may show beyond the limits on a plot ``rows`` rows tall: REACH
    when there is room, less on a short plot so the band keeps LINE_ROWS rows (every limit line drawn).

    The band's share of the axis is 1 / ((1 + 2·reach)(1 + 2·PAD)); on ``rows`` rows (``rows - 1`` steps) it
    covers LINE_ROWS steps when reach = ((rows − 1) / (LINE_ROWS (1 + 2·PAD)) − 1) / 2."""
    room = ((max(rows, 1) - 1) / (LINE_ROWS * (1 + 2 * PAD)) - 1) / 2
    return max(0.0, min(REACH, room))


def _keep_limits_readable(lo: float, hi: float, limits: dict, rows: int = 1000) -> tuple[float, float]:
    band = [v for lim in limits.values() if lim is not None
            for v in ([lim] if isinstance(lim, float) else [float(lim[1].min()), float(lim[1].max())])]
    band = [v for v in band if np.isfinite(v)]
    if len(band) < 2 or max(band) <= min(band):
        return lo, hi
    b_lo, b_hi = min(band), max(band)
    reach = reach_for(rows) * (b_hi - b_lo)
    return max(lo, b_lo - reach), min(hi, b_hi + reach)


def _clip(t: Trace, lo: float, hi: float) -> Trace:
    """The trace with y values held inside the view (points beyond sit on the frame edge)."""
    import dataclasses
    glyphs = {k: (gx, np.clip(gy, lo, hi)) for k, (gx, gy) in t.glyphs.items()}
    return dataclasses.replace(t, line_y=np.clip(t.line_y, lo, hi), glyphs=glyphs)


def build(data: ChartData, win: Window, width: int, height: int, lwidth: int, labels: np.ndarray,
          phase2: int | None, xticks: bool, token: int, caption: str = "",
          selected: tuple[int, int] | None = None) -> Picture:
    """Draw ``data`` over ``win`` at ``width`` x ``height`` cells (labels padded to ``lwidth``)."""
    asked = (int(width), int(height))
    width, height = max(int(width), lwidth + 12), max(int(height), 4)
    cols = width - lwidth - 2
    tr: Trace = trace(data.values, data.codes, win, cols)
    low: Trace | None = None if data.lower is None else trace(data.lower, data.lower_codes, win, cols)
    plt = Plot()
    plt.plotsize(width, height)
    plt._set_size(width, height)
    plt.theme("clear")
    limits = {k: limit_trace(a, win, cols, kind) for k, a, kind in
              (("ucl", data.ucl, "max"), ("center", data.center, "first"), ("lcl", data.lcl, "min"))}
    ys = [tr.lo, tr.hi] + ([low.lo, low.hi] if low is not None else []) + [v for lim in limits.values() if lim is not None
                           for v in ([lim] if isinstance(lim, float) else [float(lim[1].min()), float(lim[1].max())])]
    ys = [y for y in ys if np.isfinite(y)]
    lo, hi = (min(ys), max(ys)) if ys else (0.0, 1.0)
    lo, hi = _keep_limits_readable(lo, hi, limits, height - 2 - (1 if xticks else 0))
    span = hi - lo if hi > lo else max(abs(hi), 1.0) * 0.1
    lo, hi = lo - PAD * span, hi + PAD * span
    tr = _clip(tr, lo, hi)
    low = None if low is None else _clip(low, lo, hi)
    plt.xlim(0, cols - 1)
    plt.ylim(lo, hi)
    phase_col = column_of(phase2, win, cols) if phase2 is not None and win.start < phase2 < win.stop else None
    for col in change_columns(data.changes, win, cols):  # first: under the limits, points and line
        if col == phase_col:  # Phase II's line is drawn there (the list still says where the shift began)
            continue
        plt.scatter([col] * height, np.linspace(lo, hi, height).tolist(), marker=CHANGE_GLYPH, color=CHANGE)
    for key, colour in (("ucl", LIMIT), ("lcl", LIMIT), ("center", CENTRE)):
        lim = limits[key]
        if isinstance(lim, float):
            plt.hline(lim, color=colour)
        elif lim is not None:
            plt.plot(lim[0].tolist(), lim[1].tolist(), marker="braille", color=colour)
    if phase2 is not None and win.start < phase2 < win.stop:
        plt.vline(column_of(phase2, win, cols), color=PHASE)
    if selected is not None:  # a selected range: its two ends, and a band along the bottom between them
        a, b = max(selected[0], win.start), min(selected[1], win.stop - 1)
        if a <= b:
            ca, cb = column_of(a, win, cols), column_of(b, win, cols)
            for c in {ca, cb}:
                plt.vline(c, color=SELECTED)
            plt.plot(list(range(ca, cb + 1)), [lo + 0.02 * (hi - lo)] * (cb - ca + 1), marker="▁", color=SELECTED)
    spaced = not tr.envelope and (win.size == 1 or (cols - 1) / max(win.size - 1, 1) >= 2)
    for series, colour, normal in ((low, LOWER_LINE, LOWER_GLYPH), (tr, LINE, GLYPH[NORMAL])):
        if series is None:
            continue
        if series.line_x.size:
            plt.plot(series.line_x.tolist(), series.line_y.tolist(), marker="braille", color=colour)
        for cls in (NORMAL, REVIEWED, EXCLUDED, OPEN):
            if cls not in series.glyphs or (cls == NORMAL and not spaced):
                continue
            gx, gy = series.glyphs[cls]
            plt.scatter(gx.tolist(), gy.tolist(), marker=normal if cls == NORMAL else GLYPH[cls],
                        color=colour if cls == NORMAL else COLOUR[cls])
    ticks = axis_labels(data, win, cols)
    plt.yticks([v for v, _ in ticks] or [lo], [t.rjust(lwidth) for _, t in ticks] or [" " * lwidth])
    if xticks:
        pos, names = tick_layout(cols, lambda c: safe(labels[first_position(c, win, cols)]))
        plt.xticks(pos, names)
    else:
        plt.xticks([], [])
    text = Text.from_ansi(plt.build(), no_wrap=True, end="")
    return _picture(text, data, win, asked, token, caption)


def change_columns(changes: np.ndarray | None, win: Window, cols: int) -> list[int]:
    """Canvas columns of the change points inside the window (one per column)."""
    if changes is None or changes.size == 0:
        return []
    a, b = np.searchsorted(changes, [win.start, win.stop])
    return sorted({column_of(int(p), win, cols) for p in changes[a:b].tolist()})


def _picture(text: Text, data: ChartData, win: Window, asked: tuple[int, int], token: int,
             caption: str) -> Picture:
    """The picture of a built chart; ``asked`` is the widget size it was drawn for."""
    plain = text.plain.split("\n")
    offsets, pos = [], 0
    for line in plain:
        offsets.append(pos)
        pos += len(line) + 1
    top = next((i for i, ln in enumerate(plain) if "┌" in ln), 0)
    left = plain[top].find("┌") + 1 if plain else 0
    right = plain[top].rfind("┐") if plain else asked[0]
    bottom = next((i for i in range(len(plain) - 1, -1, -1) if "└" in plain[i]), len(plain) - 1)
    title, avail = f" {data.title} ", right - left - 2
    cap = f" {caption} " if caption else ""
    if cap and avail - len(title) - len(cap) >= 2:
        title = title + "─" * (avail - len(title) - len(cap)) + cap
    if len(title) <= avail and plain:
        start = offsets[top] + left + 1
        styled = Text(title, style="bold")
        text = text[:start] + styled + text[start + len(title):]
    width = max(len(line) for line in plain) if plain else asked[0]
    return Picture(to_strips(text, width), tuple(text.plain.split("\n")), left, max(right - left, 1), top + 1,
                   max(bottom - top - 1, 1), win, asked[0], asked[1], token)


def to_strips(text: Text, width: int) -> tuple[Strip, ...]:
    """Render ``text`` into strips of ``width`` cells (safe to call off the UI thread)."""
    console = Console(width=width, file=io.StringIO(), color_system="truecolor", force_terminal=True,
                      legacy_windows=False, highlight=False, markup=False, emoji=False)
    lines = console.render_lines(text, console.options.update(width=width, height=None, no_wrap=True),
                                 pad=True, new_lines=False)
    return tuple(Strip(line, width) for line in lines)


def legend_text(width: int | None = None) -> Text:
    """One line naming the glyphs (drawn under the charts).  With ``width``, items that do not fit are
    left out whole from the end (the point states and the cursor come first; help names every glyph)."""
    items = [(GLYPH[cls] + " ", f"bold {rgb(COLOUR[cls])}", words) for words, cls in LEGEND]
    items.append((" ", "reverse", " cursor column"))  # drawn as the cursor is: a highlighted column
    items.append((CHANGE_GLYPH + " ", f"bold {rgb(CHANGE)}", "shift began"))
    if width is not None:
        while len(items) > 4 and sum(len(g) + len(w) for g, _, w in items) + 2 * (len(items) - 1) > width:
            items.pop()
    t = Text(no_wrap=True, overflow="ellipsis")
    for i, (glyph, style, words) in enumerate(items):
        if i:
            t.append("  ")
        t.append(glyph, style=style)
        t.append(words)
    return t
