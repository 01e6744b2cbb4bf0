"""The review: one self-contained HTML page of a case for the reviewer who signs it.

``workbench report CASE --format html -o FILE.html``.  The page needs nothing else: the style sheet
is inside it, the charts are inline SVG (:mod:`workbench.review.charts`), it runs no script and
loads nothing (no link, image, font or style from anywhere).  Every text that comes from the data
or from a person — labels, stream and column names, reasons, notes, authors, paths — is escaped
for HTML after control characters are made visible, so it is shown and never obeyed.  A print
style sheet gives clean pages when the reviewer prints it or saves it as PDF.

Sections: the integrity verdict and the head hash to quote; the data; the charts; the signals
with their states and answers; the exclusions with their reasons and the limits before → after;
capability with its warnings and cautions; notes; the trail with every event's hash.
"""
from __future__ import annotations

import html
import json
from typing import Any

from workbench.core.text import change_texts, fmt, printable

STYLE = """
:root { color-scheme: light; }
body { font: 14px/1.45 system-ui, sans-serif; color: #1b1b1b; background: #fff; margin: 2em auto; max-width: 70em;
       padding: 0 1.5em; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; } h2 { font-size: 1.15em; border-bottom: 1px solid #bbb;
     margin-top: 1.8em; } .sub { color: #555; }
table { border-collapse: collapse; width: 100%; margin: 0.5em 0; font-size: 0.92em; }
th, td { border: 1px solid #d5d5d5; padding: 0.25em 0.45em; text-align: left; vertical-align: top; }
th { background: #f2f2f2; } td.num { text-align: right; font-variant-numeric: tabular-nums; }
code, .hash { font-family: ui-monospace, monospace; font-size: 0.9em; word-break: break-all; }
.verdict { padding: 0.6em 0.9em; border-radius: 4px; font-weight: 600; }
.intact { background: #e8f6ec; border: 1px solid #1e8449; } .broken { background: #fbeaea; border: 1px solid #b03a2e; }
.state-open { color: #c0392b; font-weight: 600; } .state-excluded { color: #566573; }
.state-explained, .state-no-cause-found { color: #7d3c98; }
figure { margin: 0.8em 0; } figure svg { width: 100%; height: auto; }
.legend span { margin-right: 1.2em; } ul.plain { padding-left: 1.2em; }
@media print {
  body { margin: 0; max-width: none; font-size: 10.5pt; }
  h2 { break-after: avoid; } figure, tr { break-inside: avoid; }
  thead { display: table-header-group; } a { color: inherit; text-decoration: none; }
  .verdict { border-width: 2px; }
}
@page { margin: 15mm; }
"""


def esc(value: Any) -> str:
    """Text from the data or a person, safe in HTML (control characters shown as escapes first)."""
    return html.escape(printable("" if value is None else str(value)), quote=True)


def _num(value: Any, digits: int = 4) -> str:
    return esc(fmt(value, digits) if isinstance(value, (int, float)) else value)


def _table(head: list[str], rows: list[list[str]], numeric: set[int] = frozenset()) -> str:
    if not rows:
        return "<p class=\"sub\">none</p>"
    out = ["<table><thead><tr>", *(f"<th>{h}</th>" for h in head), "</tr></thead><tbody>"]
    for r in rows:
        out.append("<tr>" + "".join(f"<td class=\"num\">{c}</td>" if i in numeric else f"<td>{c}</td>"
                                    for i, c in enumerate(r)) + "</tr>")
    out.append("</tbody></table>")
    return "".join(out)


def review_html(case, analysis, verification=None) -> str:
    """The whole page for a case and its current analysis."""
    from workbench.core.case import review
    from workbench.core.report import render
    from workbench.review.charts import chart_svgs
    rep = json.loads(render(analysis, "json", case.state.signal_states))
    info = review.case_report_json(case, analysis, verification)
    integ = info["integrity"]
    parts = [f"<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">",
             "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">",
             f"<title>Review — {esc(case.path.name)}</title><style>{STYLE}</style></head><body>",
             f"<h1>Review of {esc(case.path.name)}</h1>",
             f"<p class=\"sub\">case created {esc(info['created']['time'])} by {esc(info['created']['author'])}; "
             f"{len(case.events)} events in the trail</p>"]
    ok = bool(integ.get("intact"))
    parts.append(f"<p class=\"verdict {'intact' if ok else 'broken'}\">Integrity: "
                 f"{'intact' if ok else 'NOT intact'} — head hash <span class=\"hash\" id=\"head-hash\">"
                 f"{esc(integ.get('head_hash'))}</span></p>")
    if integ.get("problems"):
        parts.append("<ul class=\"plain\">" + "".join(f"<li>{esc(p)}</li>" for p in integ["problems"]) + "</ul>")
    for r in integ.get("remarks") or []:
        parts.append(f"<p class=\"sub\">{esc(r)}</p>")
    parts += _data(case, info, rep)
    parts += _charts(analysis, rep)
    parts += _signals(rep, info)
    parts += _exclusions(case)
    parts += _capability(rep.get("capability"))
    parts += _notes(info)
    parts += _trail(info)
    parts.append("<p class=\"sub\">Written by workbench. This page runs no script and loads nothing from "
                 "elsewhere; quote the head hash above when you sign.</p></body></html>\n")
    return "".join(parts)


def _data(case, info: dict, rep: dict) -> list[str]:
    d = info["data"]
    src = case.data.source
    where = src.shown if src is not None else d["path"]
    lim = info.get("limits_now") or {}
    rows = [["data", esc(where)], ["fingerprint (SHA-256)", f"<span class=\"hash\">{esc(d['sha256'])}</span>"],
            ["rows", esc(d["rows"])], ["layout", esc(json.dumps(d["layout"], ensure_ascii=False))],
            ["chart", esc(rep.get("chart"))], ["subgroups", esc(rep.get("subgroups"))],
            ["streams", esc(", ".join(map(str, rep.get("streams") or [])))],
            ["sigma (within)", f"{_num((rep.get('sigma') or {}).get('within'))} by {esc(lim.get('sigma_method'))}"]]
    out = ["<h2>Data and setup</h2>", _table(["", ""], rows)]
    for w in rep.get("warnings") or []:
        out.append(f"<p class=\"sub\">warning: {esc(w)}</p>")
    return out


def _charts(analysis, rep: dict) -> list[str]:
    from workbench.review.charts import chart_svgs
    out = ["<h2>Charts</h2>", "<p class=\"legend sub\"><span>▲ open signal</span><span>◆ explained or no cause "
           "found</span><span>○ excluded</span><span>dashed: control limits; solid: centre line</span></p>"]
    for title, svg in chart_svgs(analysis, rep.get("signals") or []):
        out.append(f"<figure><figcaption>{esc(title)}</figcaption>{svg}</figure>")
    out.append(_table(["chart", "centre", "LCL", "UCL"],
                      [[esc(c["name"]), _num(_flat(c.get("center"))), _num(_flat(c.get("lcl"))),
                        _num(_flat(c.get("ucl")))] for c in rep.get("charts") or []], {1, 2, 3}))
    return out


def _flat(v: Any) -> Any:
    if isinstance(v, list):
        vals = [x for x in v if isinstance(x, (int, float))]
        return f"{fmt(min(vals))} … {fmt(max(vals))}" if vals else None
    return v


def _signals(rep: dict, info: dict) -> list[str]:
    answers = {s["key"]: s for s in info.get("signals") or []}
    rows = []
    for s in rep.get("signals") or []:
        state = s.get("state") or "open"
        a = answers.get(s["key"], {})
        subs = s.get("subgroups") or []
        span = esc(subs[0]) + (f" … {esc(subs[-1])}" if len(subs) > 1 else "") if subs else ""
        answer = esc(a.get("note")) + (f" <span class=\"sub\">({esc(a.get('by'))}, {esc(a.get('time'))})</span>"
                                       if a.get("by") else "")
        rows.append([f"<code>{esc(s['key'])}</code>", esc(s["chart"]), esc(s["rule"]), esc(s.get("description")),
                     span, f"<span class=\"state-{esc(state)}\">{esc(state)}</span>", answer])
    gone = [s for k, s in answers.items() if not s.get("detected", True) and k not in {x["key"] for x in
                                                                                        rep.get("signals") or []}]
    for s in gone:  # answered signals no longer detected (an exclusion moved the limits)
        rows.append([f"<code>{esc(s['key'])}</code>", "", "", "no longer detected on the current limits", "",
                     f"<span class=\"state-{esc(s.get('state'))}\">{esc(s.get('state'))}</span>", esc(s.get("note"))])
    return [f"<h2>Signals ({len(rows)})</h2>",
            _table(["key", "chart", "rule", "pattern", "subgroups", "state", "answer"], rows)]


def _exclusions(case) -> list[str]:
    rows = []
    for ev in case.events:
        if ev.kind not in ("exclude", "restore"):
            continue
        p = ev.payload
        target = p.get("subgroup", "") + (f":{p['stream']}" if p.get("stream") else "")
        if p.get("last"):
            target = f"{p.get('subgroup')}..{p.get('last')}"
        rows.append([esc(ev.seq), esc(ev.kind), esc(target), esc(p.get("reason")), esc(p.get("cause")),
                     f"<code>{esc(p.get('signal'))}</code>" if p.get("signal") else "",
                     esc(ev.author), _limits(ev.limits_before, ev.limits_after)])
    return ["<h2>Exclusions and restores</h2>",
            _table(["event", "action", "target", "reason", "cause", "signal", "by", "limits before → after"], rows)]


def _limits(before: dict | None, after: dict | None) -> str:
    b, a = (before or {}).get("charts") or {}, (after or {}).get("charts") or {}
    lines = []
    for name in dict.fromkeys([*b, *a]):
        x, y = b.get(name) or {}, a.get(name) or {}
        bits = [f"{label} {esc(b)} → {esc(a)}" for k, label in (("center", "centre"), ("lcl", "LCL"), ("ucl", "UCL"))
                for b, a in [change_texts(x.get(k), y.get(k))]]
        lines.append(f"{esc(name)}: " + ", ".join(bits))
    return "<br>".join(lines)


def _capability(cap: dict | None) -> list[str]:
    if not cap:
        return ["<h2>Capability</h2><p class=\"sub\">no specification given: capability not judged</p>"]
    idx = cap.get("indices") or {}
    bounds = cap.get("bounds") or {}
    rows = []
    for k in ("cp", "cpk", "pp", "ppk", "cpm"):
        if idx.get(k) is not None:
            b = bounds.get(k)
            rows.append([esc(k.capitalize() if k != "cpm" else "Cpm"), _num(idx[k], 3),
                         esc(" … ".join(fmt(v, 3) for v in b) if isinstance(b, list) else fmt(b, 3))])
    spec = cap.get("spec") or {}
    out = ["<h2>Capability</h2>",
           f"<p>specification LSL {_num(spec.get('lsl'))}, target {_num(spec.get('target'))}, USL "
           f"{_num(spec.get('usl'))}; method {esc(cap.get('method'))} — {esc(cap.get('method_reason'))}</p>",
           _table(["index", "estimate", f"{esc(int(round(100 * (cap.get('ci_level') or 0.95))))}% bound(s)"], rows,
                  {1}),
           f"<p><strong>{esc(cap.get('verdict'))}</strong></p>"]
    for w in cap.get("warnings") or []:
        out.append(f"<p class=\"sub\">warning: {esc(w)}</p>")
    out.append("<ul class=\"plain\">" + "".join(f"<li>{esc(c)}</li>" for c in cap.get("cautions") or [])
               + f"<li>{esc(cap.get('common_practice'))}</li></ul>")
    return out


def _notes(info: dict) -> list[str]:
    rows = [[esc(n.get("seq")), esc(n.get("on")), esc(n.get("target")), esc(n.get("text")), esc(n.get("author"))]
            for n in info.get("notes") or []]
    return ["<h2>Notes</h2>", _table(["event", "on", "target", "note", "by"], rows)]


def _trail(info: dict) -> list[str]:
    rows = [[esc(e["seq"]), esc(e["time"]), esc(e["author"]), esc(e["kind"]), esc(e.get("summary")),
             f"<span class=\"hash\">{esc(e['hash'])}</span>"] for e in info.get("trail") or []]
    return ["<h2>Trail</h2>", _table(["#", "time (UTC)", "author", "kind", "what", "hash"], rows, {0})]
