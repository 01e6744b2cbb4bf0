"""The signals summary: per chart and rule, what fired and how much chance alone would give.

Each row counts the signals of one rule on one chart, its firing points, how many are open,
explained (or no cause found) and excluded, and the firing points expected on in-control data
of the same length from the rule's exact per-point probability
(:mod:`workbench.core.charts.expected`, where each formula is stated).  The TUI's summary
table, ``workbench report --summary`` and the tests all use :func:`rule_summary`.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from workbench.core.charts.expected import expected_firings
from workbench.core.model import Analysis


@dataclass(frozen=True)
class RuleCount:
    """Signals of one rule on one chart, with the number chance alone would give."""

    chart: str
    rule: str
    signals: int
    """Signals (adjacent firings grouped)."""
    firing_points: int
    """Points where the rule fired."""
    open: int
    explained: int
    """Explained or no cause found."""
    excluded: int
    """Answered by an exclusion."""
    points: int
    """Points the rule was evaluated on (excluded and undefined points left out)."""
    expected: float | None
    """Expected firing points on in-control data of this length (None: no per-point formula)."""
    formula: str
    """The per-point probability used, in words."""


def rule_summary(a: Analysis, state_of=lambda key: "open", answered=()) -> list[RuleCount]:
    """Per chart and rule: signals, firing points, states and the expected firing points by chance.

    ``state_of(key)`` gives a current signal's state (open, explained, no-cause-found, excluded);
    ``answered`` lists (chart, rule) of signals answered by an exclusion that no longer fire.
    """
    from workbench.core.analysis import location_rules
    from workbench.core.charts.rules import resolve
    runs = {"location": resolve(location_rules(a.settings, a.chart)).same_side,
            "spread": resolve(a.settings.spread_rules).same_side}
    by: dict[tuple[str, str], list] = {}
    for s in a.signals:
        by.setdefault((s.chart, s.rule), []).append(s)
    gone: dict[tuple[str, str], int] = {}
    for key in answered:
        gone[key] = gone.get(key, 0) + 1
    out = []
    for c in a.charts:
        for rule in c.rules:
            sigs = by.get((c.name, rule), [])
            states = [state_of(s.key) for s in sigs]
            n, expected, words = expected_firings(c, rule, a, runs.get(c.role, 8))
            out.append(RuleCount(
                chart=c.name, rule=rule, signals=len(sigs), firing_points=int(np.asarray(c.flags.get(rule, ())).size),
                open=states.count("open"), explained=states.count("explained") + states.count("no-cause-found"),
                excluded=states.count("excluded") + gone.get((c.name, rule), 0), points=n, expected=expected,
                formula=words))
    return out


def chance_words(observed: int, expected: float | None) -> str:
    """How the observed firing points compare with chance, in words."""
    if expected is None:
        return "—"
    spread = 3.0 * math.sqrt(max(expected, 1.0))
    if observed > 2.0 * expected and observed - expected > spread:
        return f"{observed / expected:.1f}× chance" if expected > 0 else "more than chance"
    if observed < 0.5 * expected and expected - observed > spread:
        return "fewer than chance"
    return "about chance"


HEADINGS = ("chart", "rule", "signals", "firing points", "open", "explained", "excluded", "points",
            "expected by chance", "vs chance")


def summary_cells(r: RuleCount) -> tuple[str, ...]:
    """One table row as text (the TUI table and the text report)."""
    exp = "—" if r.expected is None else (f"{r.expected:,.1f}" if r.expected < 1000 else f"{r.expected:,.0f}")
    return (r.chart, r.rule, f"{r.signals:,}", f"{r.firing_points:,}", f"{r.open:,}", f"{r.explained:,}",
            f"{r.excluded:,}", f"{r.points:,}", exp, chance_words(r.firing_points, r.expected))


def summary_text(rows: list[RuleCount]) -> list[str]:
    """The summary as aligned text lines, with the formulas used underneath."""
    cells = [HEADINGS] + [summary_cells(r) for r in rows]
    widths = [max(len(c[i]) for c in cells) for i in range(len(HEADINGS))]
    out = ["  " + "  ".join(c[i].ljust(widths[i]) if i < 2 else c[i].rjust(widths[i]) for i in range(len(c)))
           for c in cells]
    out.append("  expected: the sum over the chart's points of the rule's exact per-point probability on in-control")
    out.append("  data (independent normal points with the chart's centre and sigma); per rule:")
    for r in rows:
        out.append(f"    {r.chart} {r.rule}: {r.formula}")
    return out


def summary_json(rows: list[RuleCount]) -> list[dict[str, Any]]:
    return [{"chart": r.chart, "rule": r.rule, "signals": r.signals, "firing_points": r.firing_points,
             "open": r.open, "explained": r.explained, "excluded": r.excluded, "points": r.points,
             "expected": r.expected, "formula": r.formula} for r in rows]
