"""Command line: argument parsing and the headless commands.

The TUI is imported only inside the command that opens it, so the headless commands start
fast and never load Textual.
"""
from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path
from typing import NoReturn, Sequence

from workbench.core.text import printable
from workbench.core.model import Exclusion, Settings, WorkbenchError
from workbench.options import (add_data_options, add_open_options, add_setup_options, layout_request_from_args,  # noqa: F401
                               settings_from_args)


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> NoReturn:  # one line, exit 2
        fail(f"{message} (see '{self.prog} --help')")


def fail(msg: str, code: int = 2) -> NoReturn:
    """Print a one-line error and exit with status ``code`` (2: bad input or usage; 3: busy)."""
    print(f"workbench: error: {msg}", file=sys.stderr)
    raise SystemExit(code)


def _parse_exclusions(items: Sequence[str], ds) -> list[tuple[Exclusion, str]]:
    from workbench.core.case.ranges import parse_range
    out = []
    for item in items or ():
        target, sep, reason = item.partition("=")
        if not sep or not reason.strip():
            raise WorkbenchError(f"--exclude {item!r}: give SUBGROUP[:STREAM]=REASON or FIRST..LAST=REASON "
                                 "(a reason is required)")
        span = parse_range(ds, target.strip())
        if span is not None:
            out += [(Exclusion(str(label)), reason.strip()) for label in ds.labels[span[0]:span[1] + 1]]
        else:
            out.append((ds.target(target), reason.strip()))
    return out


def is_case_path(path: str) -> bool:
    return str(path).endswith(".case.json")


def cmd_report(args: argparse.Namespace) -> int:
    from workbench.core.analysis import analyse, open_signals
    from workbench.core.report import render
    from workbench.core.case.disk import check_output
    states = None
    extra = ""
    inputs = _report_inputs(args.path)
    if args.output:  # refused before anything is read or computed
        check_output(args.output, inputs)
    state_of = lambda key: "open"  # noqa: E731 — a data file has no marks
    if is_case_path(args.path):
        from workbench.core.case.casefile import Case
        from workbench.core.case import review as case_report
        from workbench.core.case.integrity import verify
        try:
            case = Case.open(args.path, readonly=True)
        except WorkbenchError:
            checked = verify(args.path, recompute=False)  # not a case file at all: raises (exit 2)
            for line in checked.lines():
                print(f"workbench: {printable(line)}", file=sys.stderr)
            return 1  # a case file whose trail does not replay: an integrity problem, reported
        inputs = _report_inputs(args.path, case)
        checked = verify(args.path, recompute=False)
        if not checked.intact:  # reported, and the exit code says it needs attention
            print(f"workbench: {printable(checked.lines()[0])}", file=sys.stderr)
        if args.output:
            check_output(args.output, inputs)
        for n in case.notices:
            print(f"workbench: {n}", file=sys.stderr)
        from workbench.core.case.format import check_data
        status = check_data(case.data, case.path, case.events)
        if not status.usable:
            return _report_case_without_data(case, args, status.message)
        ds = case.load_dataset()
        a = case.analyse(ds)
        from workbench.core.case.answers import statuses
        states = statuses(a, case.state)  # answers kept against firing points, not labels

        def state_of(key: str) -> str:
            st = states.get(key)
            return st.state if st is not None else "open"
        fmt_name = args.format
        text = "" if fmt_name == "html" else render(a, fmt_name, states, args.points)
        if fmt_name == "html":
            from workbench.review.page import review_html
            text = review_html(case, a)
        elif fmt_name == "json":
            import json
            obj = json.loads(text)
            obj["case"] = case_report.case_report_json(case, a)
            from workbench.core.report import dumps
            text = dumps(obj) + "\n"
        elif fmt_name == "markdown":
            extra = case_report.case_report_markdown(case, a)
        else:
            extra = case_report.case_report_text(case, a)
    elif args.all_characteristics:
        return _report_overview(args, inputs)
    else:
        if args.format == "html":
            raise WorkbenchError("--format html is the review of a case file: create one with "
                                 "'workbench case new DATA' and report that")
        from workbench.core.data.reader import load
        from workbench.options import data_source
        ds = load(data_source(args.path, args), layout_request_from_args(args))
        settings = settings_from_args(args, _default_settings_for(args.path))
        if getattr(args, "specs", None) and ds.characteristic:
            from workbench.core.data.characteristics import read_specs
            from workbench.core.overview import settings_for
            settings = settings_for(settings, read_specs(args.specs).get(ds.characteristic))
        excl = [e for e, _ in _parse_exclusions(args.exclude, ds)]
        a = analyse(ds, settings, excl)
        text = render(a, args.format, with_values=args.points)
    if (args.summary or args.by_stream) and args.format != "html":
        from workbench.core.report_more import add_sections
        text = add_sections(text, a, args.format, state_of, args.summary, args.by_stream)
    out = text + (("\n" + extra) if extra else "")
    _emit(args, out, inputs)
    if is_case_path(args.path) and not checked.intact:
        return 1
    if args.fail_on_signal and open_signals(a, states):
        return 1
    return 0


def _report_overview(args: argparse.Namespace, inputs: list[Path]) -> int:
    """``report DATA --all-characteristics``: the overview, headless."""
    from workbench.core import overview as O
    from workbench.core.data.characteristics import read_specs
    from workbench.options import data_source
    if args.format == "html":
        raise WorkbenchError("--all-characteristics gives text, markdown or json")
    src = data_source(args.path, args)
    request = layout_request_from_args(args)
    if request.characteristic:
        raise WorkbenchError("--all-characteristics lists every characteristic: leave out --characteristic")
    settings = settings_from_args(args, _default_settings_for(args.path))
    rows = O.overview(src, request, settings, read_specs(args.specs) if args.specs else None)
    shown = getattr(src, "shown", str(src))
    out = O.as_json(rows, shown) if args.format == "json" else O.as_text(rows, shown, args.format == "markdown")
    _emit(args, out, inputs)
    return 1 if args.fail_on_signal and any(r.open_signals for r in rows) else 0


def _report_case_without_data(case, args: argparse.Namespace, why: str) -> int:
    """The case part alone (trail, exclusions, notes, integrity) when its data are missing or changed.

    Exit 1: the review is incomplete, but an auditor still gets the record and the reason."""
    from workbench.core.case import review as case_report
    from workbench.core.report import dumps
    print(f"workbench: {why}: the data part of the report is left out", file=sys.stderr)
    if args.format == "json":
        out = dumps({"schema": "workbench.report/1", "data_unavailable": why,
                     "case": case_report.case_report_json(case, None)}) + "\n"
    elif args.format == "markdown":
        out = f"> **Data unavailable:** {case_report.md(why)}. Limits cannot be recomputed.\n\n" + \
            case_report.case_report_markdown(case, None)
    elif args.format == "html":  # the record as escaped text in a page (charts need the data)
        from workbench.review.page import STYLE, esc
        body = f"DATA UNAVAILABLE: {why}. Limits cannot be recomputed.\n\n" + case_report.case_report_text(case, None)
        out = (f"<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\"><title>Review — "
               f"{esc(case.path.name)}</title><style>{STYLE}</style></head><body><h1>Review of "
               f"{esc(case.path.name)}</h1><pre>{esc(body)}</pre></body></html>\n")
    else:
        out = f"DATA UNAVAILABLE: {why}. Limits cannot be recomputed.\n\n" + case_report.case_report_text(case, None)
    _emit(args, out, _report_inputs(args.path, case))
    return 1


def _report_inputs(path: str, case=None) -> list[Path]:
    """What a report reads and so must never write over: the input, and for a case its .bak, lock and data."""
    inputs = [Path(path)]
    if case is not None:
        from workbench.core.case.disk import backup_path, lock_path
        inputs += [backup_path(case.path), lock_path(case.path),
                   Path(os.path.normpath(Path(case.path).parent / case.data.path))]
    return inputs


def _emit(args: argparse.Namespace, out: str, inputs: list[Path]) -> None:
    """The report to stdout, or with -o through the one safe writer (never over an input)."""
    if args.output:
        from workbench.core.case.disk import write_output
        write_output(args.output, out.encode("utf-8"), inputs)
    else:
        sys.stdout.write(out)


def _default_settings_for(path: str) -> Settings | None:
    """The bundled demo carries its own specification; other files start from the defaults."""
    from workbench.demo import demo_settings_for
    return demo_settings_for(path)


def cmd_open(args: argparse.Namespace) -> int:
    from workbench.tui.app import run_app
    return run_app(args)


def cmd_perf(args: argparse.Namespace) -> int:
    if getattr(args, "old_name", False):
        print("workbench: 'workbench bench' is now 'workbench perf' (the old name goes in the next release)",
              file=sys.stderr)
    if getattr(args, "postgres", False):  # opt-in: a throwaway PostgreSQL server and a 10 M-row table
        from workbench.perf_postgres import run
        return run(args.postgres_rows)
    from workbench.perf import PARTS, run_perf
    only = tuple(x.strip() for x in (args.only or "").split(",") if x.strip())
    unknown = [x for x in only if x not in PARTS]
    if unknown:
        raise WorkbenchError(f"--only {','.join(unknown)}: choose from {', '.join(PARTS)}")
    return run_perf(args.scale, args.streams_n, quick=args.quick, only=only, subgroups=args.subgroups)


def _scale(text: str) -> int:
    from workbench.perf_data import parse_scale
    try:
        return parse_scale(text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="workbench", description="Terminal workbench for investigating SPC signals. "
                "With no command, opens the bundled demo.")
    from workbench import __version__
    p.add_argument("--version", action="version", version=f"workbench {__version__}")
    sub = p.add_subparsers(dest="command", parser_class=_Parser,
                           metavar="{report,open,case,verify,watch,perf}")

    r = sub.add_parser("report", help="headless report of a data file or a case file")
    r.add_argument("path", help="data file (CSV, TSV, XLSX) or case file (*.case.json)")
    add_data_options(r)
    add_setup_options(r)
    r.add_argument("--exclude", action="append", metavar="SUBGROUP[:STREAM]=REASON",
                   help="leave a subgroup or one reading out of the limits (repeatable); FIRST..LAST=REASON "
                        "leaves out a range (labels or 1-based positions, inclusive)")
    r.add_argument("--summary", action="store_true",
                   help="add the signals summary: per chart and rule, the firing points against the number "
                        "expected by chance on in-control data")
    r.add_argument("--by-stream", action="store_true",
                   help="add each stream charted on its own (its own individuals chart and signals)")
    r.add_argument("--format", choices=("text", "markdown", "json", "html"), default="text",
                   help="html: the self-contained review page of a case file (with -o FILE.html)")
    r.add_argument("-o", "--output", metavar="FILE", help="write the report to FILE")
    r.add_argument("--points", action="store_true",
                   help="JSON: include every subgroup's label and plotted values")
    r.add_argument("--fail-on-signal", action="store_true", help="exit 1 when an open signal remains")
    r.add_argument("--all-characteristics", action="store_true",
                   help="data with several characteristics: one row each, what needs attention first")
    r.set_defaults(func=cmd_report)

    o = sub.add_parser("open", help="open a data file or a case file in the workbench")
    add_open_options(o)
    o.set_defaults(func=cmd_open)

    for name in ("perf", "bench"):
        # "bench" is the main screen's name; the performance command was called "bench" before 0.2 and
        # keeps that name as a hidden alias for one release (it says so when used).
        b = sub.add_parser(name, help="measure the performance goals on generated data" if name == "perf" else None)
        b.add_argument("--scale", type=_scale, default=1_000_000, metavar="READINGS",
                       help="readings in the generated wide file, e.g. 1M (default) or 10M")
        b.add_argument("--subgroups", type=int, default=None, help="subgroups (instead of --scale)")
        b.add_argument("--streams", dest="streams_n", type=int, default=5)
        b.add_argument("--only", metavar="PARTS", help="comma list of: report, long, open, rules, recompute, "
                       "append, keypress, case")
        b.add_argument("--quick", action="store_true", help="skip the slow parts (processes, TUI, case growth)")
        b.add_argument("--postgres", action="store_true", help="only the database figure: a PostgreSQL table "
                       "aggregated in the database, opened in the workbench, against the database's own GROUP BY")
        b.add_argument("--postgres-rows", type=_scale, default=10_000_000, metavar="ROWS",
                       help="rows of the PostgreSQL table (default 10M)")
        b.set_defaults(func=cmd_perf, old_name=name == "bench")
    # keep the old name out of the command list (argparse lists every subparser that has a help entry)
    sub._choices_actions = [a for a in sub._choices_actions if a.dest != "bench"]

    try:
        from workbench import cli_case
        cli_case.register(sub)
    except ImportError:
        pass
    try:
        from workbench import cli_watch
        cli_watch.register(sub)
    except ImportError:
        pass
    return p


def main(argv: Sequence[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser()
    if not argv:
        argv = ["open"]
    try:
        args = parser.parse_args(argv)
        if not getattr(args, "command", None):
            args = parser.parse_args(["open"] + argv)
        return int(args.func(args) or 0)
    except WorkbenchError as e:
        fail(str(e), getattr(e, "exit_code", 2))
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:
        try:
            sys.stdout = open(os.devnull, "w")
        except OSError:
            pass
        return 0
    except OSError as e:
        fail(f"{getattr(e, 'filename', '') or ''}: {e.strerror or e}".lstrip(": "))
