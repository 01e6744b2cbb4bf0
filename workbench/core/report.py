"""Headless report views of an Analysis: JSON, plain text and Markdown.

Views only format; every figure comes from :func:`workbench.core.analysis.analyse`.
"""
from __future__ import annotations

import json
import math
from typing import Any

import numpy as np

from workbench.core.analysis import characteristic_of, comparison_of, sigma_label
from workbench.core.model import Analysis, ChartResult, WorkbenchError
from workbench.core.text import fmt, md, nums, printable

SCHEMA = "workbench.report/1"
MAX_TEXT_SIGNALS = 40


def _num(v: Any) -> float | None:
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None


def _list(a: np.ndarray) -> list:
    out = a.tolist()
    bad = np.flatnonzero(~np.isfinite(a))
    for i in bad.tolist():
        out[i] = None
    return out


def _limit(a: np.ndarray) -> Any:
    finite = np.isfinite(a)
    if finite.all() and a.size and np.all(a == a[0]):
        return float(a[0])
    if not finite.any():
        return None
    return _list(a)


def chart_json(c: ChartResult, with_values: bool = True) -> dict[str, Any]:
    out: dict[str, Any] = {"name": c.name, "title": c.title, "role": c.role,
                           "center": _limit(c.center), "lcl": _limit(c.lcl), "ucl": _limit(c.ucl),
                           "rules": list(c.rules)}
    if with_values:
        out["values"] = _list(c.values)
        for k, v in c.extra.items():
            out[k] = _list(v)
    return out


def signal_json(a: Analysis, s, states: dict | None = None) -> dict[str, Any]:
    labels = a.dataset.labels
    out = {"key": s.key, "chart": s.chart, "rule": s.rule, "description": s.description, "first": s.first,
           "last": s.last, "points": list(s.points), "fired": list(s.fired),
           "subgroups": [str(labels[p]) for p in s.points]}
    from workbench.core import signal_shapes
    signal_shapes.record(a, s, out)
    if states is not None:
        _state_json(out, states.get(s.key))
    if a.phase2_start is not None:
        out["phase"] = 2 if s.last >= a.phase2_start else 1
    return out


def _state_json(d: dict[str, Any], st: Any) -> None:
    """``state``, and for a signal some of whose firing points were answered ``answered`` (how many),
    ``answer`` (how) and ``state_words`` (``explained 1 of 4 firing points — 3 new``)."""
    d["state"] = getattr(st, "state", st) or "open"
    if getattr(st, "partial", False):
        d["answered"], d["answer"], d["state_words"] = st.answered, st.answer, st.words()


def _state_words(st: Any) -> str:
    words = getattr(st, "words", None)
    return words() if callable(words) else (getattr(st, "state", st) or "open")


def signals_json(a: Analysis, states: dict | None = None) -> list[dict[str, Any]]:
    """``signal_json`` of every signal, built from the signal table's arrays (the same dicts, faster)."""
    from workbench.core import signal_shapes
    records = getattr(a.signals, "records", None)
    if records is None:
        return [signal_json(a, s, states) for s in a.signals]
    out = records()
    signal_shapes.records(a, out)
    start = a.phase2_start
    for d in out:
        if states is not None:
            _state_json(d, states.get(d["key"]))
        if start is not None:
            d["phase"] = 2 if d["last"] >= start else 1
    return out


def report_json(a: Analysis, states: dict | None = None, with_values: bool = False) -> dict[str, Any]:
    """The JSON report (schema ``workbench.report/1``); contains no NaN.

    ``with_values`` adds each chart's plotted values and the subgroup labels (one entry per subgroup).
    """
    ds = a.dataset
    out: dict[str, Any] = {
        "schema": SCHEMA,
        "source": {"path": ds.path, "sha256": ds.sha256, "rows": ds.rows, "bytes": ds.size_bytes,
                   "encoding": ds.encoding, "missing_cells": ds.missing, "skipped_cells": ds.skipped_bad},
        "layout": ds.layout.as_dict(),
        "characteristic": dict(zip(("name", "unit"), characteristic_of(a))),
        "chart": a.chart,
        "subgroups": ds.m,
        "streams": list(ds.streams),
        "sigma": {"within": _num(a.sigma_within), "method": sigma_label(a), "overall": _num(a.sigma_overall)},
        "center": _num(a.center),
        "rules": {c.name: list(c.rules) for c in a.charts},
        "charts": [chart_json(c, with_values) for c in a.charts],
        "flags": {c.name: {rid: pos.tolist() for rid, pos in c.flags.items()} for c in a.charts},
        "signals": signals_json(a, states),
        "signal_guidance": _guidance(),
        "excluded": [{"subgroup": e.subgroup, "stream": e.stream, "position": ds.index_of(e.subgroup)}
                     for e in a.exclusions],
        "phase2_start": a.phase2_start,
        "warnings": list(a.warnings),
        "notices": list(ds.notices),
        "capability": None,
        "streams_comparison": None,
        "context": None,
    }
    from workbench.core.context import report as CX
    CX.add_leads(a, out["signals"])
    out["context"] = CX.context_json(a)
    if with_values:
        out["labels"] = [str(x) for x in ds.labels.tolist()]
    if a.phase2_start is not None:
        out["phase"] = {"start": a.phase2_start, "frozen": True}
    cmp_ = comparison_of(a)
    if cmp_ is not None:
        out["streams_comparison"] = {
            "streams": list(cmp_.streams), "means": [_num(x) for x in cmp_.means],
            "sds": [_num(x) for x in cmp_.sds], "counts": list(cmp_.counts),
            "anova": {"f": cmp_.anova_f, "p": cmp_.anova_p, "method": "one-way ANOVA (scipy.stats.f_oneway)"},
            "kruskal_wallis": {"h": cmp_.kruskal_h, "p": cmp_.kruskal_p, "method": "scipy.stats.kruskal",
                               "ranks": cmp_.kruskal_ranks},
            "variance": {"between": cmp_.var_between, "within": cmp_.var_within, "share_between": cmp_.share_between},
            "differ": cmp_.differ, "advice": cmp_.advice}
    from workbench.core.analysis import capability_for
    cap = capability_for(a, states)
    if cap is not None:
        from workbench.core.capability.report import capability_json
        out["capability"] = capability_json(cap)
    return out


def _guidance() -> dict[str, Any]:
    from workbench.core.signal_shapes import guidance
    return guidance()


def dumps(obj: Any) -> str:
    return json.dumps(obj, allow_nan=False, ensure_ascii=False, separators=(",", ":"))


def _limits_lines(a: Analysis) -> list[str]:
    from workbench.core.analysis import limits_snapshot
    snap = limits_snapshot(a)["charts"]
    lines = []
    for c in a.charts:
        centre, lcl, ucl = limit_texts(snap[c.name])
        lines.append(f"  {c.name:<6} {c.title:<30} centre {centre}   LCL {lcl}   UCL {ucl}")
    return lines


def limit_texts(lim: dict) -> tuple[str, str, str]:
    """Centre, LCL and UCL of one chart's limits snapshot by the one formatting rule (constant limits
    get as many figures as it takes to tell them apart; varying ones read ``min … max (varies)``)."""
    vals = [lim.get(k) for k in ("center", "lcl", "ucl")]
    if any(isinstance(v, dict) for v in vals):
        return tuple(fmt(v) for v in vals)  # type: ignore[return-value]
    return tuple(nums(vals))  # type: ignore[return-value]


def describe_mapping(a: Analysis) -> str:
    lay = a.dataset.layout.as_dict()
    detected = lay.pop("detected", True)
    kind = lay.pop("kind")
    streams = lay.pop("streams", None)
    parts = [f"{k}={v}" for k, v in lay.items()]
    if streams:
        parts.append("streams=" + ",".join(streams))
    return f"{kind}: " + ", ".join(parts) + (" (detected)" if detected else " (given)")


def report_text(a: Analysis, states: dict | None = None, width: int = 100) -> str:
    """A readable terminal summary."""
    ds = a.dataset
    L = [f"workbench report — {_p(ds.path)}",
         f"data      {ds.rows} rows, {ds.m} subgroups, {ds.k} stream(s): {_p(', '.join(ds.streams[:12]))}"
         + (" …" if ds.k > 12 else ""),
         f"sha256    {ds.sha256}",
         f"mapping   {_p(describe_mapping(a))}"]
    name, unit = characteristic_of(a)
    if name or unit:
        L.append(f"measured  {_p(_what(name, unit))}")
    if ds.missing or ds.skipped_bad:
        L.append(f"cells     {ds.missing} missing" + (f", {ds.skipped_bad} not numbers (skipped)" if ds.skipped_bad
                                                         else "") + " — left out of the statistics")
    for n in ds.notices:
        L.append(f"notice    {_p(n)}")
    L.append(f"chart     {a.chart}   sigma (within) {fmt(a.sigma_within)} by {sigma_label(a)}   "
             f"overall SD {fmt(a.sigma_overall)}")
    if a.phase2_start is not None:
        L.append(f"phase     limits frozen; Phase II starts at subgroup {_p(ds.labels[a.phase2_start])} "
                 f"(position {a.phase2_start})")
    L.append("limits")
    L.extend(_limits_lines(a))
    for w in a.warnings:
        L.append(f"warning   {_p(w)}")
    L.append("")
    L.append(f"signals   {len(a.signals)}")
    from workbench.core.context import report as CX
    from workbench.core.context.ranking import context_of
    ranking = context_of(a)
    for i, s in enumerate(a.signals[:MAX_TEXT_SIGNALS]):
        st = ""
        if states is not None:
            st = f"  [{_state_words(states.get(s.key))}]"
        span = ds.labels[s.first] if s.first == s.last else f"{ds.labels[s.first]} … {ds.labels[s.last]}"
        L.append(f"  {s.chart:<5} {s.rule:<14} {_p(span)}  — {s.description}{st}")
        L.extend(_shape_lines(a, i))
        L.extend(CX.signal_text_lines(a, s, ranking))
    if len(a.signals) > MAX_TEXT_SIGNALS:
        L.append(f"  … {len(a.signals) - MAX_TEXT_SIGNALS} more (use --format json for all)")
    if a.signals:
        from workbench.core.signal_shapes import CAUTION
        from workbench.core.charts.shapes import SOURCE
        import textwrap
        L += textwrap.wrap(f"{CAUTION} Cause families: {SOURCE}.", width=max(width, 40),
                           initial_indent="          ", subsequent_indent="          ")
    if a.exclusions:
        L.append("")
        L.append(f"excluded  {len(a.exclusions)}: " + ", ".join(_p(e.key) for e in a.exclusions[:30])
                 + (" …" if len(a.exclusions) > 30 else ""))
    cmp_ = comparison_of(a)
    if cmp_ is not None:
        L.append("")
        L.append("streams   " + "  ".join(f"{_p(s)} {fmt(m)}±{fmt(sd)}" for s, m, sd in
                                          zip(cmp_.streams[:8], cmp_.means, cmp_.sds)))
        L.append(f"          ANOVA F {fmt(cmp_.anova_f)} p {fmt(cmp_.anova_p)}; Kruskal–Wallis H "
                 f"{fmt(cmp_.kruskal_h)} p {fmt(cmp_.kruskal_p)}")
        L.append(f"          {_p(cmp_.advice)}")
    L.extend(CX.text_lines(a))
    from workbench.core.analysis import capability_for
    cap = capability_for(a, states)
    if cap is not None:
        from workbench.core.capability.report import capability_text
        L.append("")
        L.append(capability_text(cap, width=width, readings=a.readings(), name=_p(name) if name else None,
                                 unit=_p(unit) if unit else None))
    return "\n".join(L) + "\n"


def _shape_lines(a: Analysis, i: int) -> list[str]:
    """The shape, the change point and the cause categories to look at first, under a signal's line."""
    from workbench.core.signal_shapes import summary
    shape, began, cats = summary(a, i, glue=True)
    text = shape + (f"; {began}" if began else "") + (f"; look first at: {cats}" if cats else "")
    import textwrap
    return [line.replace("\u00a0", " ") for line in
            textwrap.wrap(text, width=100, initial_indent="        ", subsequent_indent="          ",
                          break_long_words=False, break_on_hyphens=False)]


def _md_escape(text: str) -> str:
    return md(text)


def _what(name: str | None, unit: str | None) -> str:
    """"fill volume (mL)", "fill volume" or "in mL"."""
    if name:
        return name + (f" ({unit})" if unit else "")
    return f"in {unit}"


def _p(text: Any) -> str:
    """Text from the data (path, labels, stream names) made printable for a terminal."""
    return printable(str(text))


def report_markdown(a: Analysis, states: dict | None = None) -> str:
    """A review document."""
    ds = a.dataset
    esc = _md_escape
    L = [f"# Control chart review — {esc(ds.path)}", "",
         "## Data", "",
         "| item | value |", "|---|---|",
         f"| file | {esc(ds.path)} |", f"| SHA-256 | `{ds.sha256}` |", f"| rows | {ds.rows} |", f"| missing cells | {ds.missing} |",
         *([f"| cells skipped (not numbers) | {ds.skipped_bad} |"] if ds.skipped_bad else []),
         f"| subgroups | {ds.m} |", f"| streams | {esc(', '.join(ds.streams))} |",
         f"| mapping | {esc(describe_mapping(a))} |"]
    name, unit = characteristic_of(a)
    if name or unit:
        L.append(f"| measured | {esc(_what(name, unit))} |")
    L.append("")
    for n in ds.notices:
        L.append(f"- Notice: {esc(n)}")
    L += ["", "## Chart and limits", "",
          f"Chart **{a.chart}**, within-subgroup sigma **{fmt(a.sigma_within)}** ({sigma_label(a)}), "
          f"overall SD {fmt(a.sigma_overall)}.", "",
          "| chart | centre | LCL | UCL | rules |", "|---|---|---|---|---|"]
    from workbench.core.analysis import limits_snapshot
    snap = limits_snapshot(a)["charts"]
    for c in a.charts:
        centre, lcl, ucl = limit_texts(snap[c.name])
        L.append(f"| {c.name} — {c.title} | {centre} | {lcl} | {ucl} | "
                 f"{', '.join(c.rules)} |")
    if a.phase2_start is not None:
        L += ["", "## Phase II", "",
              f"Limits are frozen. Phase II starts at subgroup {esc(ds.labels[a.phase2_start])} "
              f"(position {a.phase2_start}); {ds.m - a.phase2_start} new subgroup(s) judged against the frozen limits.",
              ""]
        p2 = [s for s in a.signals if s.last >= a.phase2_start]
        L.append(f"Phase II signals: {len(p2)}.")
    if a.warnings:
        L += ["", "## Warnings", ""] + [f"- {esc(w)}" for w in a.warnings]
    L += ["", f"## Signals ({len(a.signals)})", ""]
    if a.signals:
        from workbench.core.signal_shapes import CAUTION, summary
        from workbench.core.charts.shapes import SOURCE
        L += ["| chart | rule | subgroups | state | description | shape | where it began | look first at |",
              "|---|---|---|---|---|---|---|---|"]
        for i, s in enumerate(a.signals):
            state = _state_words((states or {}).get(s.key))
            span = ds.labels[s.first] if s.first == s.last else f"{ds.labels[s.first]} … {ds.labels[s.last]}"
            shape, began, cats = summary(a, i)
            L.append(f"| {s.chart} | {s.rule} | {esc(span)} | {state} | {s.description} | {shape} | "
                     f"{esc(began) or '—'} | {cats or '—'} |")
        L += ["", esc(CAUTION) + " Cause families: " + esc(SOURCE) + "."]
    else:
        L.append("No signals.")
    cmp_ = comparison_of(a)
    if cmp_ is not None:
        L += ["", "## Streams", "", "| stream | mean | SD | readings |", "|---|---|---|---|"]
        for s, m, sd, n in zip(cmp_.streams, cmp_.means, cmp_.sds, cmp_.counts):
            L.append(f"| {esc(s)} | {fmt(m)} | {fmt(sd)} | {n} |")
        L += ["", f"One-way ANOVA F = {fmt(cmp_.anova_f)}, p = {fmt(cmp_.anova_p)}; Kruskal–Wallis H = "
                  f"{fmt(cmp_.kruskal_h)}, p = {fmt(cmp_.kruskal_p)}.", "", esc(cmp_.advice)]
    from workbench.core.context import report as CX
    L += CX.markdown_lines(a)
    from workbench.core.analysis import capability_for
    cap = capability_for(a, states)
    if cap is not None:
        from workbench.core.capability.report import capability_markdown
        L += ["", capability_markdown(cap, readings=a.readings(), name=esc(name) if name else None,
                                      unit=esc(unit) if unit else None)]
    return "\n".join(L) + "\n"


def render(a: Analysis, fmt_name: str, states: dict | None = None, with_values: bool = False) -> str:
    if fmt_name == "json":
        return dumps(report_json(a, states, with_values)) + "\n"
    if fmt_name == "text":
        return report_text(a, states)
    if fmt_name == "markdown":
        return report_markdown(a, states)
    raise WorkbenchError(f"unknown report format {fmt_name!r} (text, markdown, json)")
