"""The overview: every characteristic of one file or table, what needs attention first.

For each characteristic the data are loaded as ``--characteristic NAME`` would load them and analysed with
the same setup (trial limits, nothing excluded): the number of readings and subgroups, the open signals,
and Ppk where a specification is known (from ``--lsl/--usl``, else the specification file).  Each row is
exactly what the report of that one characteristic says.

Order (what needs attention first): characteristics that cannot be loaded, then those with open signals or
a Ppk below the required value, each group by the number of open signals (most first), then by Ppk (lowest
first; unknown last), then by name.
"""
from __future__ import annotations

import dataclasses
import json
import math
from dataclasses import dataclass

import numpy as np

from workbench.core.model import LayoutRequest, Settings, Spec, WorkbenchError
from workbench.core.text import fmt, md


@dataclass(frozen=True)
class OverviewRow:
    """One characteristic in the overview."""

    name: str
    readings: int
    subgroups: int
    open_signals: int
    """Signals on the trial limits (nothing excluded, nothing answered)."""
    chart: str
    spec: Spec | None
    """The specification used (None: Ppk not judged)."""
    unit: str
    ppk: float | None
    attention: bool
    """True when the characteristic needs attention (error, open signals, Ppk below the required value)."""
    words: str
    """Why, in plain words."""
    error: str | None = None


def settings_for(settings: Settings, spec_row) -> Settings:
    """The setup with the specification file's entry when no specification was given on the command line
    (and its unit when the setup names none)."""
    if spec_row is None:
        return settings
    if settings.unit is None and spec_row.unit:
        settings = dataclasses.replace(settings, unit=spec_row.unit)
    if settings.spec is not None:
        return settings
    return dataclasses.replace(settings, spec=Spec(lsl=spec_row.lsl, usl=spec_row.usl, target=spec_row.target))


def row_for(name: str, dataset, settings: Settings, unit: str = "") -> OverviewRow:
    """The overview row of one loaded characteristic."""
    from workbench.core.analysis import analyse, capability_of
    a = analyse(dataset, settings)
    n_open = len(a.signals)
    ppk = None
    if settings.spec is not None and dataset.counts is None and dataset.values is not None:
        cap = capability_of(a)
        v = cap.ppk if cap is not None else None
        ppk = float(v) if v is not None and math.isfinite(v) else None
    if dataset.values is not None:
        readings = int(np.count_nonzero(~np.isnan(dataset.values)))
    elif dataset.summary_n is not None:
        readings = int(np.sum(dataset.summary_n))
    else:
        readings = int(np.count_nonzero(~np.isnan(dataset.counts)))
    required = settings.spec.required if settings.spec is not None else 1.33
    low = ppk is not None and ppk < required
    bits = [f"{n_open} open signal{'s' if n_open != 1 else ''}" if n_open else "no signal on the trial limits"]
    if settings.spec is None:
        bits.append("no specification")
    elif ppk is None:
        bits.append("Ppk not computed")
    else:
        bits.append(f"Ppk {fmt(ppk, 3)} {'below' if low else 'meets'} {fmt(required)}")
    return OverviewRow(name, readings, dataset.m, n_open, a.chart, settings.spec, unit, ppk,
                       bool(n_open or low), "; ".join(bits))


def overview(path, request: LayoutRequest, settings: Settings, specs: dict | None = None) -> tuple[OverviewRow, ...]:
    """Every characteristic of the data, sorted by what needs attention first."""
    from workbench.core.data.reader import characteristics_of, load
    specs = specs or {}
    names = characteristics_of(path, request)
    if not names:
        raise WorkbenchError(f"{getattr(path, 'shown', path)}: these data hold one characteristic: use report "
                             "without --all-characteristics")
    rows = []
    for name in names:
        spec_row = specs.get(name)
        unit = spec_row.unit if spec_row else ""
        try:
            ds = load(path, dataclasses.replace(request, characteristic=name))
            rows.append(row_for(name, ds, settings_for(settings, spec_row), unit))
        except WorkbenchError as exc:
            rows.append(OverviewRow(name, 0, 0, 0, "", None, unit, None, True, "cannot be charted", str(exc)))
    return tuple(sorted(rows, key=sort_key))


def sort_key(r: OverviewRow):
    return (r.error is None, not r.attention, -r.open_signals, r.ppk if r.ppk is not None else math.inf, r.name)


def as_json(rows: tuple[OverviewRow, ...], source: str) -> str:
    out = {"schema": "workbench.overview/1", "source": source, "characteristics": [
        {"name": r.name, "readings": r.readings, "subgroups": r.subgroups, "open_signals": r.open_signals,
         "chart": r.chart or None, "lsl": r.spec.lsl if r.spec else None, "target": r.spec.target if r.spec else None,
         "usl": r.spec.usl if r.spec else None, "unit": r.unit or None, "ppk": r.ppk, "attention": r.attention,
         "words": r.words, "error": r.error} for r in rows]}
    return json.dumps(out, ensure_ascii=False, indent=1) + "\n"


def as_text(rows: tuple[OverviewRow, ...], source: str, markdown: bool = False) -> str:
    head = ["characteristic", "readings", "subgroups", "open signals", "Ppk", "spec", "needs attention"]
    body = []
    for r in rows:
        spec = "" if r.spec is None else f"{fmt(r.spec.lsl) if r.spec.lsl is not None else '—'} … " \
                                          f"{fmt(r.spec.usl) if r.spec.usl is not None else '—'} {r.unit}".strip()
        body.append([r.name, f"{r.readings:,}", f"{r.subgroups:,}", str(r.open_signals), fmt(r.ppk, 3), spec,
                     ("yes — " if r.attention else "no — ") + (r.error or r.words)])
    if markdown:
        lines = [f"# Overview — {md(source)}", "", "| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
        lines += ["| " + " | ".join(md(c) for c in row) + " |" for row in body]
        return "\n".join(lines) + "\n"
    widths = [max(len(h), *(len(row[i]) for row in body)) for i, h in enumerate(head[:-1])]
    lines = [f"workbench overview — {source}", ""]
    lines.append("  ".join(h.ljust(w) for h, w in zip(head, widths)) + "  " + head[-1])
    for row in body:
        lines.append("  ".join(c.ljust(w) for c, w in zip(row, widths)) + "  " + row[-1])
    return "\n".join(lines) + "\n"
