"""The context ranking and the leads in the JSON, text and Markdown reports (views: they only format)."""
from __future__ import annotations

import math
from typing import Any

import numpy as np

from workbench.core.context import words as W
from workbench.core.context.leads import WINDOW, Change, anchor_of, leads_at_many, signal_anchors
from workbench.core.context.ranking import MIN_LEVEL, Ranking, Separation, context_of
from workbench.core.model import Analysis
from workbench.core.text import md, num, printable

RULE = (f"a level needs {MIN_LEVEL} or more subgroups; a column is ranked when two or more such levels hold at "
        "least half of the subgroups used; one-way ANOVA p-values adjusted across the ranked columns by "
        "Benjamini–Hochberg (1995)")
TEXT_LEADS = 3
"""Changes shown under a signal in the text report."""


def _n(v: float) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None


def column_json(s: Separation) -> dict[str, Any]:
    return {"column": s.column, "lead": s.lead, "skipped": s.skipped, "eta2": _n(s.eta2),
            "anova": {"f": _n(s.f), "p": _n(s.p), "p_adjusted": _n(s.p_adjusted)},
            "kruskal_wallis": {"h": _n(s.h), "p": _n(s.p_kruskal)},
            "levels": [{"value": lv.value, "subgroups": lv.subgroups, "mean": _n(lv.mean), "sigmas": _n(lv.sigmas)}
                       for lv in s.levels],
            "words": W.column_sentence(s)}


def context_json(a: Analysis) -> dict[str, Any] | None:
    """The report's ``context``: every context column ranked (None when the data have none)."""
    r = context_of(a)
    if r is None:
        return None
    return {"statistic": r.statistic, "subgroups_used": r.used, "fdr": r.fdr, "window": WINDOW, "rule": RULE,
            "columns": [column_json(s) for s in r.columns], "caution": W.CAUTION}


def change_json(a: Analysis, c: Change, statistic: str) -> dict[str, Any]:
    s = c.separation
    lv = s.level(c.after) if s is not None else None
    return {"column": c.column, "position": c.position, "subgroup": str(a.dataset.labels[c.position]),
            "offset": c.offset, "anchor": c.anchor, "before": c.before, "after": c.after, "lead": c.lead,
            "sigmas": _n(lv.sigmas) if lv is not None else None,
            "eta2": _n(s.eta2) if s is not None else None,
            "p_adjusted": _n(s.p_adjusted) if s is not None else None,
            "words": W.change_sentence(c, str(a.dataset.labels[c.position]), statistic)}


def add_leads(a: Analysis, signals: list[dict[str, Any]]) -> None:
    """``leads`` of every signal dict (by its ``first``), in place; data without context columns get no
    ``leads`` key (``context`` is null), so a report of 40,000 signals pays nothing for it."""
    if not a.dataset.extras:
        return
    r = context_of(a)
    anchors, at = signal_anchors(a)             # the signal table's order, as ``signals`` is
    found = leads_at_many(a, anchors, at)
    for d, changes in zip(signals, found):
        d["leads"] = [change_json(a, c, r.statistic) for c in changes]


def text_lines(a: Analysis) -> list[str]:
    """The context section of the text report."""
    r = context_of(a)
    if r is None:
        return []
    out = ["", "context   " + printable(W.ranking_head(r))]
    out += ["  " + printable(W.column_sentence(s)) for s in r.columns]
    out.append("  " + W.CAUTION)
    return out


def signal_text_lines(a: Analysis, s, ranking: Ranking | None) -> list[str]:
    """Under one signal of the text report: its leads (at most ``TEXT_LEADS``), then how many more."""
    if ranking is None:
        return []
    anchor, at = anchor_of(a, s.key, s.first)
    changes = leads_at_many(a, np.array([anchor]), np.array([at]))[0]
    out = [f"      what changed there: {printable(W.change_sentence(c, str(a.dataset.labels[c.position]), ranking.statistic))}"
           for c in changes[:TEXT_LEADS]]
    if len(changes) > TEXT_LEADS:
        out.append(f"      … {len(changes) - TEXT_LEADS} more change(s) nearby (--format json for all)")
    return out


def markdown_lines(a: Analysis) -> list[str]:
    """The Markdown sections: the ranking table and what changed near each signal."""
    r = context_of(a)
    if r is None:
        return []
    out = ["", "## Context columns", "", md(W.ranking_head(r)) + ".", "",
           "| column | lead | η² | ANOVA F | p | adjusted p | Kruskal–Wallis H | p | levels (σ from the centre line, "
           "subgroups) |", "|---|---|---|---|---|---|---|---|---|"]
    for s in r.columns:
        if s.skipped:
            out.append(f"| {md(s.column)} | not ranked: {md(s.skipped)} | | | | | | | |")
            continue
        levels = ", ".join(md(W.level_text(lv)) for lv in s.levels)
        out.append(f"| {md(s.column)} | {'**lead**' if s.lead else 'no'} | {num(s.eta2)} | {num(s.f)} | "
                   f"{W.p_text(s.p)} | {W.p_text(s.p_adjusted)} | {num(s.h)} | {W.p_text(s.p_kruskal)} | {levels} |")
    out += ["", f"Rule: {md(RULE)}.", "", f"*{md(W.CAUTION)}*"]
    found = leads_at_many(a, *signal_anchors(a))
    near = [(s, ch) for s, ch in zip(a.signals, found) if ch]
    if near:
        out += ["", f"## What changed there (within {WINDOW} subgroups of each signal's change point, or of "
                    "its run's start)", ""]
        for s, changes in near:
            out.append(f"- **{s.chart} {s.rule}** from {md(a.dataset.labels[s.first])}:")
            out += [f"  - {md(W.change_sentence(c, str(a.dataset.labels[c.position]), r.statistic))}"
                    for c in changes]
    return out
