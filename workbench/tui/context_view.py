"""Context columns and leads as the TUI shows them (the subgroup panel, the breakdown, the "what changed
there" screen).  Views only: every figure comes from ``core/context``; pieces are wrapped whole, never cut."""
from __future__ import annotations

import textwrap

from rich.text import Text

from workbench.core.context import words as W
from workbench.core.context.leads import CHANGE_POINT, RANGE_END, RUN, WINDOW, Change, anchor_of, changes_at, \
    range_leads
from workbench.core.context.ranking import context_of
from workbench.core.model import Analysis, Dataset

from workbench.tui.view import safe
from workbench.tui.widgets.lines import BOLD, DIM, Lines

HINT = "C: what changed there"
NBSP = "\u00a0"


def pieces(ds: Dataset, p: int) -> list[str]:
    """``name value`` of each context column at subgroup ``p`` (a set reads ``a | b``)."""
    return [f"{safe(name)} {safe(str(values[p]))}" for name, values in ds.extras.items()]


def _layout(parts: list[str], width: int) -> list[list[str]]:
    """Whole pieces on lines of ``width`` joined by `` · ``; a piece wider than the panel on lines of its own."""
    lines: list[list[str]] = []
    used = 0
    for part in parts:
        if lines and len(part) <= width and used + 3 + len(part) <= width:
            lines[-1].append(part)
            used += 3 + len(part)
        else:
            lines.append([part])
            used = len(part)
    return lines


def _height(lines: list[list[str]], width: int) -> int:
    return sum(len(textwrap.wrap(ln[0], max(width, 10), subsequent_indent="  ")) if len(ln[0]) > width else 1
               for ln in lines)


def add_context(out: Lines, ds: Dataset, p: int, width: int, room: int | None = None) -> None:
    """The subgroup's context as whole pieces joined by `` · `` in at most ``room`` lines (None: as many as
    it takes); the pieces that do not fit are counted (``+2 more · C``), never cut."""
    parts = pieces(ds, p)
    if not parts:
        return
    lines = _layout(parts, width)
    more = ""
    if room is not None and _height(lines, width) > room:
        for keep in range(len(parts) - 1, -1, -1):
            more = f"+{len(parts) - keep} more · C"
            lines = _layout(parts[:keep] + [more], width)
            if _height(lines, width) <= max(room, 1):
                break
    for line in lines:
        if len(line[0]) > width:
            out.wrapped(line[0], width, None, "  ")
            continue
        for i, part in enumerate(line):
            if i:
                out.add(" · ", DIM)
            if part == more:
                out.add(part, DIM)
                continue
            name, _, value = part.partition(" ")
            out.add(name + " ", DIM).add(value)
        out.end()


def short(c: Change) -> str:
    """A lead in a few words for the subgroup panel: ``lot L-1 → L-2 one subgroup before the run, +1.9σ``."""
    where = W.when(c).replace(RUN, "the run's start").replace(CHANGE_POINT, "the change point") \
        .replace(RANGE_END, "the range's end")
    s = c.separation
    lv = s.level(c.after) if s is not None and s.lead else None
    tail = f", {W.sigmas(lv.sigmas)}" if lv is not None else ""
    return f"{c.column} {c.before} → {c.after} {where}{tail}"


def signal_changes(a: Analysis, key: str, first: int) -> list[Change]:
    """The changes near the signal ``key`` whose pattern starts at ``first``: around its estimated change
    point where it has one, else around its run's start."""
    if not a.dataset.extras:
        return []
    anchor, at = anchor_of(a, key, first)
    return changes_at(a, anchor, CHANGE_POINT if at else RUN)


def add_leads(out: Lines, a: Analysis, key: str, first: int, width: int) -> None:
    """Under the signal in the subgroup panel: its leads (changes of columns that separate the statistic)."""
    found = [c for c in signal_changes(a, key, first) if c.lead]
    for c in found[:2]:
        out.wrapped("lead (C): " + safe(short(c)), width, BOLD, "  ")


def breakdown_lines(a: Analysis, p: int, key: str | None, first: int | None) -> Text:
    """The breakdown's context line and, for a signal at this subgroup, its first lead in words."""
    t = Text()
    parts = pieces(a.dataset, p)
    if parts:
        t.append("\ncontext: ", style="dim")
        t.append(" · ".join(part.replace(" ", NBSP) for part in parts))  # wraps between pieces, never inside
    if key is not None and first is not None:
        found = signal_changes(a, key, first)
        r = context_of(a)
        if found and r is not None:
            c = found[0]
            t.append("\nwhat changed there: ", style="bold")
            t.append(safe(W.change_sentence(c, str(a.dataset.labels[c.position]), r.statistic)))
            t.append(f"  ({HINT})", style="dim")
    return t


def screen_text(a: Analysis, title: str, changes: list[Change]) -> Text:
    """The "what changed there" screen: the changes near the anchor, the column ranking, the caution."""
    ds, r = a.dataset, context_of(a)
    t = Text()
    t.append(safe(title) + "\n", style="bold")
    if r is None:
        t.append("\nThese data have no context columns (a lot, an operator, a shift, a tool id …): every column "
                 "the layout does not use is kept as context, so an export that carries them shows them here.\n")
        return t
    t.append(f"\nChanges within {WINDOW} subgroups, leads first, nearest first\n", style="bold underline")
    if not changes:
        t.append("no context column changes there\n", style="dim")
    for c in changes:
        t.append("• " if c.lead else "· ", style="bold" if c.lead else "dim")
        t.append(safe(W.change_sentence(c, str(ds.labels[c.position]), r.statistic)) + "\n",
                 style="bold" if c.lead else "")
    t.append("\nContext columns against the plotted statistic\n", style="bold underline")
    t.append(safe(W.ranking_head(r)) + "\n", style="dim")
    for s in r.columns:
        t.append(("• " if s.lead else "· ") + safe(W.column_sentence(s)) + "\n", style="bold" if s.lead else "")
    t.append("\n" + W.CAUTION + "\n", style="italic")
    return t


def range_changes(a: Analysis, first: int, last: int) -> list[Change]:
    return range_leads(a, first, last) if a.dataset.extras else []
