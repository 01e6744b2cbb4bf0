"""``workbench watch CASE``: follow a case's growing data file or database table and judge new rows (Phase II).

Without options the workbench opens with watching switched on.  ``--headless`` prints one
line per new signal and keeps going until Ctrl-C or SIGTERM; ``--once`` judges what was
appended since the case last looked and exits 1 when a new signal appeared, 0 when not (2 on
an error).  Lines go to stdout (``--format json``: one JSON object a line); messages about
the case go to stderr.
"""
from __future__ import annotations

import argparse
import json
import math
import signal
import sys
import threading
from typing import Any

from workbench.core.model import WorkbenchError


def _seconds(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"not a number of seconds: {text!r}") from None
    if not (math.isfinite(v) and v > 0):
        raise argparse.ArgumentTypeError(f"the interval must be a positive number of seconds, not {text!r}")
    return v


def _num(v: Any) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None


class Printer:
    """Writes the lines of a watch: one per new signal, and with ``each`` one per judged subgroup."""

    def __init__(self, fmt: str, each: bool, bell: bool, out=None, err=None) -> None:
        self.fmt, self.each, self.out, self.err = fmt, each, out or sys.stdout, err or sys.stderr
        self.bell = bell and fmt == "text" and self.err.isatty()
        self.warned_readonly = False

    def line(self, obj: dict[str, Any], text: str) -> None:
        if self.fmt == "json":
            self.out.write(json.dumps(obj, ensure_ascii=False, allow_nan=False) + "\n")
        else:
            self.out.write(text + "\n")
        self.out.flush()

    def note(self, text: str, obj: dict[str, Any] | None = None) -> None:
        """A message about the watch on stderr (and, in JSON mode with ``obj``, a JSON line on stdout)."""
        from workbench.core.case.events import printable
        print(f"workbench: {printable(text)}", file=self.err, flush=True)
        self.status(obj)

    def status(self, obj: dict[str, Any] | None) -> None:
        """A JSON status line on stdout (JSON mode only)."""
        if obj is not None and self.fmt == "json":
            self.line(obj, "")

    def judgement(self, j: Any) -> int:
        """Print a look's lines; returns the number of signals printed."""
        from workbench.core.case.events import printable, utc_now
        from workbench.core.report import fmt
        a, now, ds = j.analysis, utc_now(), j.analysis.dataset
        label = lambda i: printable(str(ds.labels[i]))  # noqa: E731
        stamp = lambda i: None if ds.times is None else str(ds.times[i])[:19].replace("T", " ")  # noqa: E731
        if self.each:
            at = {}
            for s in j.signals:
                for p in s.fired:
                    at.setdefault(p, []).append(s.key)
            for i in j.positions:
                charts = {c.name: {"value": _num(c.values[i]), "center": _num(c.center[i]), "lcl": _num(c.lcl[i]),
                                   "ucl": _num(c.ucl[i])} for c in a.charts}
                words = ", ".join(f"{n} {fmt(v['value'])} [{fmt(v['lcl'])}, {fmt(v['ucl'])}]" for n, v in charts.items())
                keys = at.get(i, [])
                self.line({"event": "subgroup", "time": now, "position": i, "subgroup": str(ds.labels[i]),
                           "subgroup_time": stamp(i), "phase": 2, "charts": charts, "signals": keys},
                          f"{now}  {label(i)}  judged: {words}" + (f"  — {len(keys)} signal(s)" if keys else ""))
        for s in j.signals:
            self._signal(j, s, now, label, stamp)
        if j.signals and self.bell:
            self.err.write("\a")
            self.err.flush()
        return len(j.signals)

    def _signal(self, j: Any, s: Any, now: str, label, stamp) -> None:
        from workbench.core.case.events import printable
        from workbench.core.streams import breakdown
        a, p = j.analysis, s.last
        b = breakdown(a, p)
        c = a.chart_named(s.chart)
        began = s.key in j.began_before
        new_fired = [f for f in s.fired if f in j.positions]
        obj = {"event": "signal", "time": now, "key": s.key, "chart": s.chart, "rule": s.rule,
               "description": s.description, "position": p, "subgroup": str(a.dataset.labels[p]),
               "subgroup_time": stamp(p), "first": s.first, "first_subgroup": str(a.dataset.labels[s.first]),
               "began_before": began, "fired": new_fired, "value": _num(c.values[p]), "lcl": _num(c.lcl[p]),
               "ucl": _num(c.ucl[p]), "driver": b.driver, "verdict": b.verdict}
        since = f" (pattern began at subgroup {label(s.first)})" if began else ""
        self.line(obj, f"{now}  {label(p)}  {s.chart} {s.rule}: {s.description}{since} — {printable(b.verdict)}")


def cmd_watch(args: argparse.Namespace) -> int:
    if not (args.headless or args.once):
        return _open_workbench(args)
    from workbench.core.case.casefile import Case
    from workbench.core.phase2.judge import Watch
    printer = Printer(args.format, args.each, not args.no_bell)
    try:
        case = Case.open(args.case, readonly=False, author=args.author)
    except WorkbenchError as exc:
        printer.status({"event": "stopped", "status": "error", "message": str(exc)})
        raise
    try:
        for n in case.notices:
            printer.note(n)
        try:
            watch = Watch.start(case, args.key)
        except WorkbenchError as exc:
            status = "shrunk" if "shrunk" in str(exc) else "rewritten" if "rewritten" in str(exc) or \
                "changed" in str(exc) else "missing" if "no such file" in str(exc) else "error"
            printer.status({"event": "stopped", "status": status, "message": str(exc)})
            raise
        a = watch.analysis
        stop = threading.Event()  # Ctrl-C / SIGTERM stop the watch cleanly from the moment it says it started
        handlers = {} if args.once else {sig: signal.signal(sig, lambda *_: stop.set())
                                         for sig in (signal.SIGINT, signal.SIGTERM)}
        try:
            return _watch(args, watch, printer, a, case, stop)
        finally:
            for sig, h in handlers.items():
                signal.signal(sig, h)
    finally:
        case.close()


def _watch(args: argparse.Namespace, watch: Any, printer: "Printer", a: Any, case: Any, stop: threading.Event) -> int:
    src = getattr(watch.follower, "source", None)
    by = f" by key {src.key}" if src is not None else ""
    printer.note(f"watching {watch.follower.path}{by}: {a.dataset.m} subgroups, Phase II from position "
                 f"{watch.frozen.subgroups}" + ("" if args.once else "; Ctrl-C stops"),
                 {"event": "start", "case": str(case.path), "data": watch.follower.path, "subgroups": a.dataset.m,
                  "phase2_start": watch.frozen.subgroups, "seen": watch.seen})
    j = watch.catch_up()
    found = printer.judgement(j)
    _record(watch, j, printer)
    if args.once:
        return 1 if found else 0
    return _follow(watch, printer, args.interval, stop)


def _record(watch: Any, j: Any, printer: Printer) -> None:
    where = watch.record(j)
    if where is None and j.positions and watch.case.readonly and not printer.warned_readonly:
        printer.warned_readonly = True
        printer.note(f"the case is read-only ({watch.case.readonly_reason}): what was judged is not recorded")


def _follow(watch: Any, printer: Printer, interval: float, stop: threading.Event) -> int:
    """Poll until ``stop`` is set (by Ctrl-C or SIGTERM, whose handlers the caller installed)."""
    while not stop.is_set():
        try:
            j = watch.poll()
        except WorkbenchError as exc:
            printer.status({"event": "stopped", "status": "error", "message": str(exc)})
            raise
        printer.judgement(j)
        _record(watch, j, printer)
        if not j.ok:
            printer.status({"event": "stopped", "status": j.status, "message": j.message})
            raise WorkbenchError(j.message)
        if not (j.update and j.update.more):
            stop.wait(interval)
    printer.note("watch stopped", {"event": "stopped", "status": "stopped", "message": "watch stopped"})
    return 0


def _open_workbench(args: argparse.Namespace) -> int:
    """``workbench watch CASE``: the workbench with watching switched on (checked for a freeze first)."""
    from workbench.core.case.casefile import Case
    from workbench.core.phase2.judge import not_frozen_message
    with Case.open(args.case, readonly=True) as case:
        if case.state.frozen is None:
            raise WorkbenchError(not_frozen_message(args.case))
    try:
        from workbench.tui.app import run_app
    except ImportError:
        raise WorkbenchError("the workbench screen is not available here; use --headless or --once") from None
    from workbench.options import open_args
    targs = open_args([args.case] + (["--author", args.author] if args.author else []))
    targs.watch, targs.watch_interval, targs.bell = True, args.interval, not args.no_bell
    targs.watch_key = args.key
    return run_app(targs)


def register(subparsers: Any) -> None:
    """Add ``watch`` to the main parser's subparsers."""
    p = subparsers.add_parser(
        "watch", help="follow a case's data file and judge new rows against the frozen limits (Phase II)",
        description="Follow a case's data file as rows are appended and judge each new subgroup against the "
                    "frozen limits with the case's rules. Needs frozen limits (workbench case freeze CASE).")
    p.add_argument("case", metavar="CASE", help="the case file (*.case.json)")
    mode = p.add_mutually_exclusive_group()
    mode.add_argument("--headless", action="store_true",
                      help="print one line per new signal instead of opening the workbench; Ctrl-C stops")
    mode.add_argument("--once", action="store_true",
                      help="judge what was appended since the case last looked, then exit: 1 when a new signal "
                           "appeared, 0 when not")
    p.add_argument("--interval", type=_seconds, default=2.0, metavar="SECONDS",
                   help="seconds between looks at the file (default 2)")
    p.add_argument("--key", metavar="COLUMN",
                   help="a database source: the column that increases with every new row; the rows after the last "
                        "key judged are read at each look (recorded in the case; default: the one it records)")
    p.add_argument("--format", choices=("text", "json"), default="text", help="text lines or JSON lines")
    p.add_argument("--each", "--verbose", dest="each", action="store_true",
                   help="also print one line per judged subgroup")
    p.add_argument("--no-bell", action="store_true", help="no terminal bell on a new signal")
    p.add_argument("--author", help="who watches (recorded in the trail; default: $WORKBENCH_AUTHOR, else user@host)")
    p.set_defaults(func=cmd_watch)
