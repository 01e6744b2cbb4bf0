"""The subgroup panel and the status bar of the bench (built in O(streams), never O(series))."""
from __future__ import annotations

import numpy as np
from rich.style import Style

from workbench.core.analysis import sigma_label
from workbench.core.text import num, nums, reading

from workbench.tui.context_view import add_context, add_leads
from workbench.tui.plotting import COLOUR, GLYPH
from workbench.tui.session import Snapshot
from workbench.tui.view import NORMAL, OPEN, STATE_WORDS, safe
from workbench.tui.widgets.lines import BOLD, BOLD_REVERSE, DIM, ITALIC, UNDERLINE_DIM, Lines, LinesPanel

MAX_GLYPH, MIN_GLYPH = "▴", "▾"
GLYPH_STYLE = {cls: Style(bold=True, color="rgb({},{},{})".format(*c)) for cls, c in COLOUR.items()}


def chart_value(c, p: int) -> str:
    """A chart's plotted value at ``p`` by the one rule, with as many figures as it takes to tell it
    apart from its limits (a mean just beyond its UCL never reads as equal to it)."""
    return nums((c.values[p], c.lcl[p], c.center[p], c.ucl[p]))[0]


def _fits(out_width: int, *texts: str) -> bool:
    return sum(len(t) for t in texts) <= out_width


def subgroup_lines(snap: Snapshot, p: int, width: int = 44, height: int | None = None) -> Lines:
    """The selected subgroup: chart values, its signal and its leads, readings by stream, why excluded, its
    context (in the lines left of ``height``, the rest counted), notes."""
    a, ds, st = snap.analysis, snap.dataset, snap.state
    raw = str(ds.labels[p])
    out = Lines()
    where = f"({p + 1:,} of {ds.m:,})"
    if _fits(width, safe(raw), "  ", where):
        out.add(safe(raw), BOLD).add("  " + where, DIM).end()
    else:  # a long label: the position on its own line, never cut
        out.add(safe(raw), BOLD).end().add(where, DIM).end()
    if ds.times is not None and ds.layout.time and ds.layout.time != ds.layout.subgroup:
        out.add(f"time {safe(str(ds.times[p])[:19].replace('T', ' '))}", DIM).end()
    used = 0
    for c in a.charts:
        code = int(snap.marks.codes[c.name][p])
        if "cusum-" in c.extra:
            runs = [(f"{c.name} C⁺ ", None), (chart_value(c, p), BOLD), (" C⁻ ", None),
                    (num(c.extra["cusum-"][p]), BOLD)]
        else:
            runs = [(f"{c.name} ", None), (chart_value(c, p), BOLD)]
        if code != NORMAL:
            runs.append((f" {GLYPH[code]}", GLYPH_STYLE[code]))
        size = sum(len(t) for t, _ in runs)
        if used and used + 3 + size > width:  # the next chart's value on a line of its own
            out.end()
            used = 0
        if used:
            out.add(" · ", DIM)
            used += 3
        for text, style in runs:
            out.add(text, style)
        used += size
    out.end()
    info = st.exclusion_info.get(raw)
    if info is not None:
        out.wrapped(f"excluded: {safe(info.reason)} ({safe(info.cause) if info.cause else 'no category'}, "
                    f"{safe(info.author)})", width, ITALIC, "  ")
    if ds.values is not None:
        _readings(out, snap, p, width)
    row = snap.marks.row_at(p)
    if row is not None:
        r = snap.marks.rows[row]
        out.wrapped(f"signal {r.chart} {r.rule} · {r.status or STATE_WORDS.get(r.state, r.state)}", width, BOLD,
                    "  ")
        out.wrapped(r.words, width, DIM, "  ")
        if r.first >= 0:
            add_leads(out, a, r.key, r.first, width)
    add_context(out, ds, p, width, None if height is None else max(height - len(out.done()), 1))
    for note in st.notes:
        if note.target == raw or note.target.startswith(raw + ":"):
            out.wrapped(f"note: {safe(note.text)} ({safe(note.author)})", width, None, "  ")
    return out


def _readings(out: Lines, snap: Snapshot, p: int, width: int) -> None:
    ds, a, st = snap.dataset, snap.analysis, snap.state
    row = ds.values[p]
    cells = a.excluded_cells[p] if a.excluded_cells is not None else np.zeros(ds.k, bool)
    live = np.isfinite(row) & ~(cells & ~a.excluded_subgroups[p])
    hi = lo = None
    if live.sum() >= 2:
        vals = np.where(live, row, np.nan)
        hi, lo = int(np.nanargmax(vals)), int(np.nanargmin(vals))
    mean = float(np.mean(row[live])) if live.any() else float("nan")
    name_w = min(max([len(safe(s)) for s in ds.streams] + [6]), 16)
    devs = [row[j] - mean if live[j] else float("nan") for j in range(ds.k)]
    dev_text = [("+" if d > 0 else "") + num(d) if np.isfinite(d) else "" for d in devs]
    read_text = [reading(v) for v in row]
    rw = max([len(t) for t in read_text] + [7])
    dw = max([len(t) for t in dev_text] + [6])
    head = f"{'stream':<{name_w}} {'reading':>{rw}} {'− mean':>{dw}}"
    rng = f"range {num(row[hi] - row[lo])}" if hi is not None else ""
    if rng and len(head) + 2 + len(rng) <= width:
        out.add(head + "  " + rng, UNDERLINE_DIM).end()
    else:  # the range on its own line rather than cut
        if rng:
            out.add(rng, DIM).end()
        out.add(head, UNDERLINE_DIM).end()
    for j, name in enumerate(ds.streams):
        out.add(f"{safe(name)[:name_w]:<{name_w}} ")
        out.add(f"{read_text[j]:>{rw}}", BOLD if j in (hi, lo) else None)
        out.add(f" {dev_text[j]:>{dw}}")
        if j == hi:
            out.add(f" {MAX_GLYPH} max", BOLD)
        elif j == lo:
            out.add(f" {MIN_GLYPH} min", BOLD)
        if cells[j] and not a.excluded_subgroups[p]:
            info = st.exclusion_info.get(f"{ds.labels[p]}:{name}")
            out.add(" excluded" + (f": {safe(info.reason)}" if info else ""), ITALIC)
        out.end()


class SubgroupPanel(LinesPanel, can_focus=False):
    """The selected subgroup's readings by stream."""

    def show(self, snap: Snapshot, p: int) -> None:
        self.set_lines(subgroup_lines(snap, p, max(self.size.width, 20), self.size.height or None))


def status_lines(snap: Snapshot, p: int, saving: bool, busy: str = "", width: int = 120,
                 lines: int = 2, following: str | None = None) -> Lines:
    """The characteristic (data of several), chart kind, sigma and method, frozen, limits (at subgroup ``p``) |
    following, counts, case file, saved.

    Two lines (or one when ``lines`` is 1); a piece that does not fit its line is left out whole,
    never cut.  Numbers follow the one formatting rule; each chart's limits are labelled
    ``LCL · CL · UCL``.
    """
    a, mk = snap.analysis, snap.marks
    narrow = width < 100
    setup: list[list[tuple[str, Style | None]]] = [
        [(f" {a.chart} ", BOLD_REVERSE), (f" σ {num(a.sigma_within)} {sigma_label(a)}", None)]]
    for c in a.charts:
        lcl, cl, ucl = nums((c.lcl[p], c.center[p], c.ucl[p]))
        setup.append([(f"{c.name} ", BOLD), (f"LCL {lcl} · CL {cl} · UCL {ucl}", None)])
    if a.dataset.characteristic is not None:  # data of several characteristics: which one, first of all
        from workbench.core.analysis import characteristic_of
        unit = characteristic_of(a)[1]
        setup.insert(0, [(safe(a.dataset.characteristic), BOLD)] + ([(f" ({safe(unit)})", None)] if unit else []))
    if a.phase2_start is not None or snap.state.frozen is not None:
        g = [("frozen", BOLD_REVERSE)]
        if a.phase2_start is not None:
            g.append((f" Phase II from {safe(a.dataset.labels[a.phase2_start])}", None))
        setup.insert(2 if a.dataset.characteristic is not None else 1, g)  # before the limits (also on the axes)
    words = ("expl.", "no cause", "excl.") if narrow else ("explained", "no cause", "excluded")
    state = (("read-only", BOLD_REVERSE) if snap.readonly else (busy or "saving…", ITALIC) if saving
             else ("saved", DIM))
    case = [
        [("open ", None), (str(mk.open_count), GLYPH_STYLE[OPEN] if mk.open_count else BOLD),
         (f" · {words[0]} {mk.explained_count} · {words[1]} {mk.no_cause_count} · {words[2]} {mk.excluded_count}",
          None)],
        [(safe(snap.case_name), BOLD), (" ", None), state]]
    if following:
        case.insert(0, [(f" {following} ", BOLD_REVERSE)])
    out = Lines()
    for line in ([setup + case] if lines == 1 else [setup, case]):
        used = 0
        for g in line:
            size = sum(len(t) for t, _ in g) + (3 if used else 1)
            if used + size > width:
                continue  # no room: the piece is left out rather than cut
            out.add(" │ " if used else " ", DIM)
            for text, style in g:
                out.add(text, style)
            used += size
        out.end()
    return out
