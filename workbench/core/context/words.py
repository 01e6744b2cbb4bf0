"""The leads in plain words, every number by the one rule (``core/text.py``)."""
from __future__ import annotations

import math

from workbench.core.context.leads import Change
from workbench.core.context.ranking import Level, Ranking, Separation
from workbench.core.text import num

CAUTION = ("These are leads, not verdicts: a context column that changed near a signal, or whose levels differ, "
           "says where to look first; it does not prove a cause (a column can change together with the real "
           "cause, or with time).")


def p_text(p: float) -> str:
    """A p-value for people: ``< 0.001`` below 0.001, else by the one rule."""
    if p is None or not math.isfinite(p):
        return "—"
    return "< 0.001" if p < 0.001 else num(p)


def p_words(p: float) -> str:
    """``p < 0.001`` or ``p 0.04800``."""
    return f"p {p_text(p)}"


def sigmas(v: float) -> str:
    """A level's distance from the centre line: ``+1.900σ``, ``-0.2000σ``."""
    if v is None or not math.isfinite(v):
        return "—σ"
    return ("+" if v > 0 else "") + num(v) + "σ"


def when(c: Change) -> str:
    """``at the start of the signal's run``, ``one subgroup before …``, ``2 subgroups after …``."""
    k = abs(c.offset)
    if k == 0:
        return f"at {c.anchor}"
    n = "one subgroup" if k == 1 else f"{k} subgroups"
    return f"{n} {'before' if c.offset < 0 else 'after'} {c.anchor}"


def change_sentence(c: Change, label: str | None = None, statistic: str = "plotted statistic") -> str:
    """One change near an anchor and how its column separates the plotted statistic."""
    at = f" ({label})" if label else ""
    head = f"{c.column} changed {c.before} → {c.after} {when(c)}{at}"
    s = c.separation
    if s is None:
        return head
    if s.skipped:
        return f"{head}; not ranked ({s.skipped})"
    stats = f"η² {num(s.eta2)}, adjusted {p_words(s.p_adjusted)}"
    if not s.lead:
        return f"{head}; its levels do not separate the {statistic.lower()} ({stats})"
    lv = s.level(c.after)
    if lv is None:
        return f"{head}; {c.column} separates the {statistic.lower()} ({stats}), but {c.after} has too few " \
               "subgroups to place"
    return f"{head}; subgroups of {c.after} read {sigmas(lv.sigmas)} ({stats})"


def level_text(lv: Level) -> str:
    return f"{lv.value} {sigmas(lv.sigmas)} ({lv.subgroups})"


def column_sentence(s: Separation) -> str:
    """One ranked column: its verdict as a lead, the tests and its levels."""
    if s.skipped:
        return f"{s.column}: not ranked ({s.skipped})"
    verdict = "lead" if s.lead else "no lead"
    return (f"{s.column}: {verdict} — η² {num(s.eta2)}, ANOVA F {num(s.f)} {p_words(s.p)} (adjusted "
            f"{p_text(s.p_adjusted)}), Kruskal–Wallis H {num(s.h)} {p_words(s.p_kruskal)}; levels "
            + ", ".join(level_text(lv) for lv in s.levels))


def ranking_head(r: Ranking) -> str:
    """What was tested and how many leads there are."""
    n = len(r.leads)
    return (f"{len(r.columns)} context column(s) against the {r.statistic.lower()} of {r.used} subgroups "
            f"(excluded ones left out); {n} lead(s) at a false-discovery rate of {num(r.fdr)} "
            "(Benjamini–Hochberg across columns)")
