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

from workbench.core.model import CHART_KINDS, SIGMA_METHODS, Exclusion, LayoutRequest, Settings, WorkbenchError


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> NoReturn:  # one line, exit 2
        fail(f"{message} (see '{self.prog} --help')")


def fail(msg: str) -> NoReturn:
    """Print a one-line error and exit with status 2."""
    print(f"workbench: error: {msg}", file=sys.stderr)
    raise SystemExit(2)


def _float(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"not a number: {text!r}") from None
    if v != v or v in (float("inf"), float("-inf")):
        raise argparse.ArgumentTypeError(f"not a finite number: {text!r}")
    return v


def add_data_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("layout (auto-detected unless given)")
    g.add_argument("--layout", choices=("long", "wide", "individuals", "summary"), help="how the file is arranged")
    g.add_argument("--subgroup", metavar="COL", help="column with the subgroup key")
    g.add_argument("--stream", metavar="COL", help="long layout: column naming the stream")
    g.add_argument("--value", metavar="COL", help="column with the reading")
    g.add_argument("--time", metavar="COL", help="column with a timestamp (rows are sorted by it)")
    g.add_argument("--streams", metavar="A,B,C", help="wide layout: the stream columns")
    g.add_argument("--count", metavar="COL", help="count data: column with defectives or defects")
    g.add_argument("--size", metavar="COL", help="count data: column with the sample size")
    g.add_argument("--skip-bad", action="store_true", help="skip and count non-numeric cells instead of stopping")


def add_setup_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("setup")
    g.add_argument("--chart", choices=("auto",) + CHART_KINDS, help="chart kind (default: auto)")
    g.add_argument("--sigma", choices=SIGMA_METHODS, help="within-subgroup sigma estimator (default: auto)")
    g.add_argument("--rules", metavar="SET", help="rule set for the location chart: western-electric (default), "
                   "nelson, limits-only, or a comma list of rule ids")
    g.add_argument("--spread-rules", metavar="SET", help="rule set for the spread chart (default: limits-only)")
    g.add_argument("--known-mean", type=_float, metavar="MU", help="standard value of the process mean")
    g.add_argument("--known-sigma", type=_float, metavar="SIGMA", help="standard value of sigma")
    s = p.add_argument_group("specification and capability")
    s.add_argument("--lsl", type=_float, help="lower specification limit")
    s.add_argument("--usl", type=_float, help="upper specification limit")
    s.add_argument("--target", type=_float, help="target (default: the middle of a two-sided specification)")
    s.add_argument("--confidence", type=_float, help="confidence level for the bounds (default 0.95)")
    s.add_argument("--required", type=_float, help="required minimum index (default 1.33)")
    s.add_argument("--capability-method", choices=("normal", "box-cox", "percentile", "auto"),
                   help="capability model (default: auto)")
    s.add_argument("--bounds", choices=("two-sided", "lower"), help="confidence bounds two-sided or lower only")
    s.add_argument("--shift", type=_float, help="stated shift added before a Box-Cox transform")
    e = p.add_argument_group("EWMA, CUSUM and count charts")
    e.add_argument("--ewma-lambda", type=_float, metavar="L", help="EWMA weight λ in (0, 1] (default 0.2)")
    e.add_argument("--ewma-l", type=_float, metavar="L", help="EWMA limit width in sigmas (default 2.962)")
    e.add_argument("--ewma-asymptotic", action="store_true", default=None, help="asymptotic EWMA limits")
    e.add_argument("--cusum-k", type=_float, metavar="K", help="CUSUM reference value in sigmas (default 0.5)")
    e.add_argument("--cusum-h", type=_float, metavar="H", help="CUSUM decision interval in sigmas (default 5; 4 is faster with more false alarms)")
    e.add_argument("--head-start", type=_float, metavar="H0", help="CUSUM fast initial response head start")
    e.add_argument("--laney", choices=("auto", "on", "off"), help="Laney p'/u' correction (default auto)")


def layout_request_from_args(args: argparse.Namespace) -> LayoutRequest:
    streams = tuple(s.strip() for s in (args.streams or "").split(",") if s.strip())
    return LayoutRequest(kind=args.layout, subgroup=args.subgroup, stream=args.stream, value=args.value,
                         time=args.time, streams=streams, count=args.count, size=args.size,
                         skip_bad=bool(args.skip_bad))


_SETTING_ARGS = {"chart": "chart", "sigma": "sigma", "rules": "rules", "spread_rules": "spread_rules",
                 "known_mean": "known_mean", "known_sigma": "known_sigma", "ewma_lambda": "ewma_lambda",
                 "ewma_l": "ewma_l", "ewma_asymptotic": "ewma_asymptotic", "cusum_k": "cusum_k",
                 "cusum_h": "cusum_h", "head_start": "cusum_head_start", "laney": "laney"}
_SPEC_ARGS = {"lsl": "lsl", "usl": "usl", "target": "target", "confidence": "confidence",
              "required": "required", "capability_method": "method", "bounds": "bounds", "shift": "shift"}


def settings_from_args(args: argparse.Namespace, base: Settings | None = None) -> Settings:
    """Settings from the command line, on top of ``base`` (only options given change anything)."""
    base = base or Settings()
    d = base.as_dict()
    for arg, key in _SETTING_ARGS.items():
        v = getattr(args, arg, None)
        if v is not None:
            d[key] = v
    spec = dict(d.get("spec") or {})
    for arg, key in _SPEC_ARGS.items():
        v = getattr(args, arg, None)
        if v is not None:
            spec[key] = v
    d["spec"] = spec or None
    settings = Settings.from_dict(d)
    from workbench.core.charts.rules import resolve
    if settings.rules:
        resolve(settings.rules)
    resolve(settings.spread_rules)
    if settings.spec is not None:
        if settings.spec.lsl is None and settings.spec.usl is None:
            raise WorkbenchError("capability options need a specification: give --lsl and/or --usl")
        from workbench.core.capability.assess import validate_spec
        validate_spec(settings.spec)
    return settings


def _parse_exclusions(items: Sequence[str], streams: tuple[str, ...]) -> list[tuple[Exclusion, str]]:
    out = []
    for item in items or ():
        target, sep, reason = item.partition("=")
        if not sep or not reason.strip():
            raise WorkbenchError(f"--exclude {item!r}: give SUBGROUP[:STREAM]=REASON (a reason is required)")
        out.append((Exclusion.parse(target, streams), reason.strip()))
    return out


def is_case_path(path: str) -> bool:
    return str(path).endswith(".case.json")


def cmd_report(args: argparse.Namespace) -> int:
    from workbench.core.analysis import analyse, open_signals
    from workbench.core.report import render
    states = None
    extra = ""
    if is_case_path(args.path):
        from workbench.core.case.casefile import Case
        from workbench.core.case import review as case_report
        case = Case.open(args.path, readonly=True)
        for n in case.notices:
            print(f"workbench: {n}", file=sys.stderr)
        from workbench.core.case.format import check_data
        status = check_data(case.data, case.path)
        if not status.usable:
            return _report_case_without_data(case, args, status.message)
        ds = case.load_dataset()
        a = case.analyse(ds)
        states = case.state.signal_states
        fmt_name = args.format
        text = render(a, fmt_name, states, args.points)
        if fmt_name == "json":
            import json
            obj = json.loads(text)
            obj["case"] = case_report.case_report_json(case, a)
            from workbench.core.report import dumps
            text = dumps(obj) + "\n"
        elif fmt_name == "markdown":
            extra = case_report.case_report_markdown(case, a)
        else:
            extra = case_report.case_report_text(case, a)
    else:
        from workbench.core.data.reader import load
        ds = load(args.path, layout_request_from_args(args))
        settings = settings_from_args(args, _default_settings_for(args.path))
        excl = [e for e, _ in _parse_exclusions(args.exclude, ds.streams)]
        a = analyse(ds, settings, excl)
        text = render(a, args.format, with_values=args.points)
    out = text + (("\n" + extra) if extra else "")
    if args.output:
        Path(args.output).write_text(out, encoding="utf-8")
    else:
        sys.stdout.write(out)
    if args.fail_on_signal and open_signals(a, states):
        return 1
    return 0


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
    else:
        out = f"DATA UNAVAILABLE: {why}. Limits cannot be recomputed.\n\n" + case_report.case_report_text(case, None)
    if args.output:
        Path(args.output).write_text(out, encoding="utf-8")
    else:
        sys.stdout.write(out)
    return 1


def _default_settings_for(path: str) -> Settings | None:
    """The bundled demo carries its own specification; other files start from the defaults."""
    from workbench.demo import demo_settings_for
    return demo_settings_for(path)


def cmd_open(args: argparse.Namespace) -> int:
    from workbench.tui.app import run_app
    return run_app(args)


def cmd_bench(args: argparse.Namespace) -> int:
    from workbench.perf import run_bench
    return run_bench(args.subgroups, args.streams_n, quick=args.quick)


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="workbench", description="Terminal workbench for investigating SPC signals. "
                "With no command, opens the bundled demo.")
    from workbench import __version__
    p.add_argument("--version", action="version", version=f"workbench {__version__}")
    sub = p.add_subparsers(dest="command", parser_class=_Parser)

    r = sub.add_parser("report", help="headless report of a data file or a case file")
    r.add_argument("path", help="data file (CSV, TSV, XLSX) or case file (*.case.json)")
    add_data_options(r)
    add_setup_options(r)
    r.add_argument("--exclude", action="append", metavar="SUBGROUP[:STREAM]=REASON",
                   help="leave a subgroup or one reading out of the limits (repeatable)")
    r.add_argument("--format", choices=("text", "markdown", "json"), default="text")
    r.add_argument("-o", "--output", metavar="FILE", help="write the report to FILE")
    r.add_argument("--points", action="store_true",
                   help="JSON: include every subgroup's label and plotted values")
    r.add_argument("--fail-on-signal", action="store_true", help="exit 1 when an open signal remains")
    r.set_defaults(func=cmd_report)

    o = sub.add_parser("open", help="open a data file or a case file in the workbench")
    o.add_argument("path", nargs="?", help="data file or case file (default: the bundled demo)")
    add_data_options(o)
    add_setup_options(o)
    o.add_argument("--author", help="author recorded in the case trail")
    o.add_argument("--case", metavar="CASE", help="case file to create for a data file")
    o.set_defaults(func=cmd_open)

    b = sub.add_parser("bench", help="measure the performance goals on generated data")
    b.add_argument("--subgroups", type=int, default=200_000)
    b.add_argument("--streams", dest="streams_n", type=int, default=5)
    b.add_argument("--quick", action="store_true", help="skip the slow parts (TUI, memory)")
    b.set_defaults(func=cmd_bench)

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
        fail(str(e))
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
