"""Optional report sections: the signals summary (``--summary``) and each stream on its own (``--by-stream``).

Views only format: the summary comes from :func:`workbench.core.rule_summary.rule_summary`, the
per-stream charts from :func:`workbench.core.stream_charts.stream_charts` (``analyse()`` on each
stream), the same functions the workbench's summary table and stream view call.
"""
from __future__ import annotations

import json
from typing import Any, Callable

from workbench.core.model import Analysis
from workbench.core.text import fmt, md, printable

MAX_STREAM_SIGNALS = 10
"""Signals listed per stream in the text and Markdown reports (JSON lists them all)."""


def _limits(c) -> dict[str, Any]:
    from workbench.core.report import _limit
    return {"center": _limit(c.center), "lcl": _limit(c.lcl), "ucl": _limit(c.ucl)}


def by_stream_json(a: Analysis) -> list[dict[str, Any]]:
    from workbench.core.report import signal_json
    from workbench.core.stream_charts import stream_charts
    out = []
    for sc in stream_charts(a):
        b = sc.analysis
        out.append({"stream": sc.stream, "chart": b.chart, "sigma": b.sigma_within, "sigma_method": b.sigma_method,
                    "charts": [{"name": c.name, **_limits(c)} for c in b.charts],
                    "signals": [signal_json(b, s) for s in b.signals]})
    return out


def _stream_lines(a: Analysis, markdown: bool) -> list[str]:
    from workbench.core.stream_charts import stream_charts
    esc = md if markdown else printable
    L = ["", "## Each stream on its own" if markdown else "each stream on its own (I-MR on the stream's own readings)"]
    if markdown:
        L += ["", "I-MR on the stream's own readings (Montgomery), the case's location rules.", ""]
    for sc in stream_charts(a):
        b = sc.analysis
        i, mr = b.charts[0], b.charts[1]
        head = (f"{esc(sc.stream)}: i centre {fmt(i.center[0])} LCL {fmt(i.lcl[0])} UCL {fmt(i.ucl[0])} · "
                f"mr centre {fmt(mr.center[0])} UCL {fmt(mr.ucl[0])} · sigma {fmt(b.sigma_within)} · "
                f"{len(b.signals)} signal(s)")
        L.append(("### " if markdown else "  ") + head)
        labels = b.dataset.labels
        for s in list(b.signals)[:MAX_STREAM_SIGNALS]:
            span = esc(labels[s.first]) + ("" if s.first == s.last else f" … {esc(labels[s.last])}")
            L.append(("- " if markdown else "    ") + f"{s.chart} {s.rule} {span} — {s.description}")
        if len(b.signals) > MAX_STREAM_SIGNALS:
            L.append(("- " if markdown else "    ") + f"… {len(b.signals) - MAX_STREAM_SIGNALS} more "
                     "(--format json lists all)")
    return L


def add_sections(text: str, a: Analysis, fmt_name: str, state_of: Callable[[str], str], summary: bool,
                 by_stream: bool) -> str:
    """``text`` (a rendered report) with the sections asked for added."""
    from workbench.core.rule_summary import HEADINGS, rule_summary, summary_cells, summary_json, summary_text
    rows = rule_summary(a, state_of) if summary else []
    if fmt_name == "json":
        from workbench.core.report import dumps
        obj = json.loads(text)
        if summary:
            obj["rule_summary"] = summary_json(rows)
        if by_stream:
            obj["by_stream"] = by_stream_json(a)
        return dumps(obj) + "\n"
    markdown = fmt_name == "markdown"
    L: list[str] = []
    if summary:
        if markdown:
            L += ["", "## Signals against chance", "", "| " + " | ".join(HEADINGS) + " |",
                  "|" + "---|" * len(HEADINGS)]
            L += ["| " + " | ".join(md(c) for c in summary_cells(r)) + " |" for r in rows]
            L += ["", "Expected: the sum over the chart's points of the rule's exact per-point probability on "
                  "in-control data. " + "; ".join(f"{r.chart} {r.rule}: {md(r.formula)}" for r in rows) + "."]
        else:
            L += ["", "signals against chance"] + summary_text(rows)
    if by_stream:
        L += _stream_lines(a, markdown)
    return text.rstrip("\n") + "\n" + "\n".join(L) + "\n"
