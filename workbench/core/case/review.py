"""The case part of the reports: what a reviewer reads and signs.

Views only: every figure comes from the replayed :class:`~workbench.core.case.events.CaseState`,
the trail and (when given) the current :class:`~workbench.core.model.Analysis`.  Text fields
written by people are shown through :func:`~workbench.core.case.events.printable` (and escaped for
Markdown), so a note holding markup or terminal escape sequences is displayed, not obeyed.
"""
from __future__ import annotations

import re
from typing import Any

from workbench.core.case.events import CaseState, describe_trail, printable
from workbench.core.case.casefile import Case, Verification, verify
from workbench.core.model import Analysis, Settings
from workbench.core.text import fmt, md

MAX_SIGNAL_ROWS = 200
"""Beyond this many signals only those with a state are listed one by one (the JSON has all)."""


def _verification(case: Case, verification: Verification | None) -> Verification:
    return verification if verification is not None else verify(case.path, recompute=False)


def _limits_now(case: Case, analysis: Analysis | None) -> dict | None:
    if analysis is None:
        return case.state.limits
    from workbench.core.analysis import limits_snapshot
    return limits_snapshot(analysis)


def _limit_rows(first: dict | None, now: dict | None) -> list[tuple[str, str, str, str, str, str, str]]:
    charts = list(dict.fromkeys([*((first or {}).get("charts") or {}), *((now or {}).get("charts") or {})]))
    rows = []
    for name in charts:
        a = ((first or {}).get("charts") or {}).get(name) or {}
        b = ((now or {}).get("charts") or {}).get(name) or {}
        rows.append((name, *(fmt(a.get(k)) for k in ("center", "lcl", "ucl")),
                     *(fmt(b.get(k)) for k in ("center", "lcl", "ucl"))))
    return rows


def _signal_rows(state: CaseState, analysis: Analysis | None) -> tuple[list[dict], int]:
    """One dict per signal worth listing, and how many open signals were left out of the list.

    A current signal's state comes from the answers given to its firing points
    (:mod:`workbench.core.case.answers`): a run that grew reads e.g. ``explained 1 of 4 firing points —
    3 new`` and counts as open."""
    from workbench.core.case.answers import statuses
    rows, hidden = [], 0
    seen = set()
    signals = analysis.signals if analysis is not None else ()
    now = statuses(analysis, state)
    for s in signals:
        seen.add(s.key)
        st = now.get(s.key)
        if (st is None or st.state == "open") and len(signals) > MAX_SIGNAL_ROWS:
            hidden += 1
            continue
        labels = analysis.dataset.labels
        span = str(labels[s.first]) if s.first == s.last else f"{labels[s.first]} … {labels[s.last]}"
        fields = ({"state": "open", "words": "open", "by": None, "time": None, "note": None, "seq": None}
                  if st is None else {"state": st.state, "words": st.words(), "by": st.author, "time": st.time,
                                      "note": st.note, "seq": st.seq})
        rows.append({"key": s.key, "subgroups": span, "detected": True, **fields})
    for key in state.signal_states:
        if key not in seen:
            seen.add(key)
            rows.append({"key": key, "subgroups": "", "detected": analysis is None, **_state_fields(state, key)})
    # signals answered by an exclusion: the excluded points left the rule sequences, so the signal is
    # no longer detected, but the review lists it with the exclusion that answered it
    for ex_key, info in state.exclusion_info.items():
        keys = [k for k, _labs in info.answers] if info.answers is not None else [info.signal, *info.signals]
        for key in keys:
            if key and key not in seen:
                seen.add(key)
                rows.append({"key": key, "subgroups": ex_key, "detected": False, "state": "excluded",
                             "words": "excluded", "by": info.author, "time": info.time, "note": info.reason,
                             "seq": info.seq})
    return rows, hidden


def _state_fields(state: CaseState, key: str) -> dict[str, Any]:
    st = state.signal_state(key)
    if st == "excluded":
        info = next(i for i in state.exclusion_info.values() if i.signal == key or key in i.signals)
        return {"state": st, "words": st, "by": info.author, "time": info.time, "note": info.reason, "seq": info.seq}
    mark = state.signal_states.get(key)
    if mark is None:
        return {"state": st, "words": st, "by": None, "time": None, "note": None, "seq": None}
    return {"state": st, "words": st, "by": mark.author, "time": mark.time, "note": mark.note, "seq": mark.seq}


def _setup_rows(settings: Settings) -> list[tuple[str, str]]:
    d = settings.as_dict()
    spec = d.pop("spec")
    rows = [(k, "—" if v is None else str(v)) for k, v in d.items()]
    rows += [(f"spec.{k}", "—" if v is None else str(v)) for k, v in (spec or {}).items()]
    return rows


def _integrity_words(v: Verification) -> str:
    return "intact" if v.intact else "NOT intact: " + "; ".join(v.problems)


def case_report_markdown(case: Case, analysis: Analysis | None = None, verification: Verification | None = None,
                         capability_section: str | None = None) -> str:
    """A review document for a case: identity, setup, limits, exclusions, signals, notes, trail, sign-off.

    ``capability_section`` (Markdown, from the capability report) is placed after the
    limits when given.
    """
    st, ref, v = case.state, case.data, _verification(case, verification)
    L = [f"# Case review — {md(case.path.name)}", "",
         "## Case file", "", "| item | value |", "|---|---|",
         f"| case file | {md(case.path)} |",
         f"| created | {md(st.created_time)} by {md(st.created_by)} |",
         f"| events | {len(case.events)} |",
         f"| trail head hash | `{st.head_hash}` |",
         f"| integrity | {md(_integrity_words(v))} |", ""]
    L += ["## Data", "", "| item | value |", "|---|---|",
          f"| data file | {md(ref.path)} (relative to the case file) |",
          f"| SHA-256 at creation | `{ref.sha256}` |",
          f"| rows, bytes at creation | {ref.rows}, {ref.size_bytes} |",
          f"| layout | {md(_layout_words(ref.layout.as_dict()))} |",
          f"| data now | {md(v.data.message if v.data else case.data_status.message)} |", ""]
    L += ["## Setup", "", "| setting | value |", "|---|---|"]
    L += [f"| `{k}` | {md(val)} |" for k, val in _setup_rows(st.settings)]
    trail = describe_trail(case.events)
    changes = [(ev, line) for ev, line in zip(case.events, trail) if ev.kind == "settings"]
    if changes:
        L += ["", "Setup changes:", ""]
        L += [f"- event {ev.seq}, {md(ev.time)}, {md(ev.author)}: {md(line)}" for ev, line in changes]
    now = _limits_now(case, analysis)
    L += ["", "## Limits", "",
          f"Sigma (within) as first computed {fmt((st.first_limits or {}).get('sigma'))}, now "
          f"{fmt((now or {}).get('sigma'))}.", "",
          "| chart | first centre | first LCL | first UCL | now centre | now LCL | now UCL |",
          "|---|---|---|---|---|---|---|"]
    L += ["| " + " | ".join(md(c) for c in row) + " |" for row in _limit_rows(st.first_limits, now)]
    L += ["", md(_frozen_words(case))]
    if capability_section:
        L += ["", "## Capability", "", capability_section.rstrip()]
    L += ["", f"## Exclusions ({len(st.exclusions)})", ""]
    if st.exclusions:
        L += ["| subgroup / reading | reason | cause | answers signal | by | time | event |",
              "|---|---|---|---|---|---|---|"]
        for ex in st.exclusions:
            i = st.exclusion_info[ex.key]
            L.append(f"| {md(ex.key)} | {md(i.reason)} | {md(i.cause or '—')} | {md(i.signal or '—')} | "
                     f"{md(i.author)} | {md(i.time)} | {i.seq} |")
    else:
        L.append("Nothing is excluded.")
    rows, hidden = _signal_rows(st, analysis)
    L += ["", "## Signals", ""]
    if rows:
        L += ["| signal | subgroups | state | set by | time | note or reason |", "|---|---|---|---|---|---|"]
        for r in rows:
            where = md(r["subgroups"]) if r["detected"] else "no longer detected"
            L.append(f"| {md(r['key'])} | {where} | {md(r['words'])} | {md(r['by'] or '—')} | {md(r['time'] or '—')} | "
                     f"{md(r['note'] or '—')} |")
    else:
        L.append("No signals." if analysis is not None else "No signal has a state yet.")
    if hidden:
        L += ["", f"{hidden} more open signals are not listed here (the JSON report lists every signal)."]
    L += ["", f"## Notes ({len(st.notes)})", ""]
    if st.notes:
        L += ["| on | note | by | time | event |", "|---|---|---|---|---|"]
        L += [f"| {md(_note_on(n.kind, n.target))} | {md(n.text)} | {md(n.author)} | {md(n.time)} | {n.seq} |"
              for n in st.notes]
    else:
        L.append("No notes.")
    L += ["", "## Trail", "", "| event | time | author | action | hash |", "|---|---|---|---|---|"]
    L += [f"| {ev.seq} | {md(ev.time)} | {md(ev.author)} | {md(line)} | `{ev.hash[:16]}` |"
          for ev, line in zip(case.events, trail)]
    L += ["", "## Sign-off", "",
          f"I have reviewed this case up to event {st.seq} (trail head hash `{st.head_hash}`).", "",
          "Reviewer: ______________________  Date: ____________  Signature: ______________________", ""]
    return "\n".join(L)


def case_report_text(case: Case, analysis: Analysis | None = None, verification: Verification | None = None) -> str:
    """The case part of the plain-text report."""
    st, ref, v = case.state, case.data, _verification(case, verification)
    p = printable
    L = [f"case      {p(str(case.path))}  ({len(case.events)} events, created {p(st.created_time)} by "
         f"{p(st.created_by)})",
         f"integrity {_integrity_words(v)}",
         f"head      {st.head_hash}",
         f"data      {p(ref.path)}  sha256 {ref.sha256}  ({ref.rows} rows, {ref.size_bytes} bytes at creation)",
         f"          {p(v.data.message if v.data else case.data_status.message)}"]
    now = _limits_now(case, analysis)
    L.append("limits    first → now")
    for name, *vals in _limit_rows(st.first_limits, now):
        L.append(f"  {name:<7} centre {vals[0]} → {vals[3]}   LCL {vals[1]} → {vals[4]}   "
                 f"UCL {vals[2]} → {vals[5]}")
    L.append("          " + _frozen_words(case))
    L.append(f"excluded  {len(st.exclusions)}")
    for ex in st.exclusions:
        i = st.exclusion_info[ex.key]
        extra = "".join(f"; {k} {p(x)}" for k, x in (("cause", i.cause), ("signal", i.signal)) if x)
        L.append(f"  {p(ex.key)}: {p(i.reason)}{extra}  — {p(i.author)}, {p(i.time)} (event {i.seq})")
    rows, hidden = _signal_rows(st, analysis)
    marked = [r for r in rows if r["state"] != "open" or r["words"] != "open"]
    open_n = sum(1 for r in rows if r["state"] == "open") + hidden
    open_count = f", {open_n} open" if analysis is not None else ""
    L.append(f"signals   {len(marked)} with a state{open_count}")
    for r in marked:
        gone = "" if r["detected"] else " (no longer detected)"
        note = f": {p(r['note'])}" if r["note"] else ""
        L.append(f"  {p(r['key'])} {r['words']}{gone}{note}  — {p(r['by'] or '')}")
    L.append(f"notes     {len(st.notes)}")
    for n in st.notes:
        L.append(f"  [{p(_note_on(n.kind, n.target))}] {p(n.text)}  — {p(n.author)}, {p(n.time)} (event {n.seq})")
    L.append("trail")
    L += [f"  {ev.seq:>4} {p(ev.time)} {p(ev.author)}: {line}"
          for ev, line in zip(case.events, describe_trail(case.events))]
    return "\n".join(L) + "\n"


def case_report_json(case: Case, analysis: Analysis | None = None,
                     verification: Verification | None = None) -> dict[str, Any]:
    """The ``case`` object of the JSON report (text fields as stored)."""
    st, v = case.state, _verification(case, verification)
    rows, _hidden = _signal_rows(st, analysis)
    return {
        "file": str(case.path),
        "created": {"time": st.created_time, "author": st.created_by},
        "data": {**case.data.as_dict(), "status": (v.data or case.data_status).status},
        "integrity": {"intact": v.intact, "problems": list(v.problems), "remarks": list(v.remarks),
                      "events": len(case.events), "head_hash": st.head_hash},
        "setup": st.settings.as_dict(),
        "causes": list(st.causes),
        "limits_first": st.first_limits,
        "limits_now": _limits_now(case, analysis),
        "frozen": st.frozen.as_dict() if st.frozen else None,
        "exclusions": [{"target": ex.key, "subgroup": ex.subgroup, "stream": ex.stream,
                        **{k: getattr(st.exclusion_info[ex.key], k)
                           for k in ("reason", "cause", "signal", "author", "time", "seq")}}
                       for ex in st.exclusions],
        "signals": [{k: r[k] for k in ("key", "state", "words", "detected", "by", "time", "note", "seq")}
                    for r in rows if r["state"] != "open" or r["words"] != "open"],
        "notes": [{"on": n.kind, "target": n.target, "text": n.text, "author": n.author, "time": n.time,
                   "seq": n.seq} for n in st.notes],
        "trail": [{"seq": ev.seq, "time": ev.time, "author": ev.author, "kind": ev.kind, "summary": line,
                   "hash": ev.hash} for ev, line in zip(case.events, describe_trail(case.events))],
    }


def _note_on(kind: str, target: str) -> str:
    return "case" if kind == "case" else f"{kind} {target}"


def _layout_words(lay: dict) -> str:
    kind = lay.pop("kind")
    detected = lay.pop("detected", True)
    parts = [f"{k}={','.join(v) if isinstance(v, list) else v}" for k, v in lay.items()]
    return f"{kind}: {', '.join(parts)} ({'detected' if detected else 'given'})"


def _frozen_words(case: Case) -> str:
    st = case.state
    if st.frozen is None:
        return "Limits are not frozen (Phase I)."
    ev = next(e for e in reversed(case.events) if e.kind == "freeze")
    return (f"Limits frozen at event {ev.seq} by {printable(ev.author)} ({printable(ev.time)}) for a {st.frozen.chart} "
            f"chart: Phase I is the first {st.frozen.subgroups} subgroups; centre {fmt(st.frozen.center)}, "
            f"sigma {fmt(st.frozen.sigma)}.")
