"""Command-line options shared by the command line and the workbench screen.

Argument → ``Settings`` / ``LayoutRequest`` conversion lives here, in a neutral module that both
``workbench.cli*`` and ``workbench.tui`` import, so the screen never imports the command line.
"""
from __future__ import annotations

import argparse
from typing import Sequence

from workbench.core.model import CHART_KINDS, SIGMA_METHODS, LayoutRequest, Settings, WorkbenchError


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
    g.add_argument("--characteristic", metavar="NAME", help="data with several characteristics: the one to chart")
    g.add_argument("--specs", metavar="FILE.csv", help="specifications per characteristic (name, LSL, target, USL, "
                   "unit); used when no --lsl/--usl is given")
    d = p.add_argument_group("database (when the data argument is a URL such as sqlite:///plant.db)")
    d.add_argument("--table", metavar="NAME", help="the table to read")
    d.add_argument("--query", metavar="SQL", help="a SELECT statement to read instead of a table")
    d.add_argument("--order", metavar="A,B", help="columns a table is read in order of (default: its primary key)")
    d.add_argument("--key", metavar="COLUMN", help="a column that increases with every new row: the rows are read "
                   "in its order, and watching the case reads the rows after the last key judged")
    d.add_argument("--aggregate-in-database", action="store_true", default=None,
                   help="long data: compute each subgroup's n, mean, range and SD in the database with one GROUP BY "
                        "(automatic above 1,000,000 rows)")


def data_source(path: str, args: argparse.Namespace):
    """The data argument as given: a file path, or a database source for a URL (with --table or --query)."""
    from workbench.core.data.sql import is_url, source_from_url
    table, query = getattr(args, "table", None), getattr(args, "query", None)
    if not is_url(path):
        if table or query or getattr(args, "aggregate_in_database", None) or getattr(args, "key", None):
            raise WorkbenchError(f"--table, --query, --key and --aggregate-in-database need a database URL (such as "
                                 f"sqlite:///plant.db), not {path}")
        return path
    order = tuple(c.strip() for c in (getattr(args, "order", None) or "").split(",") if c.strip())
    if order and query:
        raise WorkbenchError("--order applies to --table; put ORDER BY in the query instead")
    return source_from_url(path, table, query, order, key=getattr(args, "key", None) or None,
                           aggregate=bool(getattr(args, "aggregate_in_database", None)))


def add_setup_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("setup")
    g.add_argument("--chart", choices=("auto",) + CHART_KINDS, help="chart kind (default: auto)")
    g.add_argument("--sigma", choices=SIGMA_METHODS, help="within-subgroup sigma estimator (default: auto)")
    g.add_argument("--rules", metavar="SET", help="rule set for the location chart: western-electric (default), "
                   "nelson, limits-only, or a comma list of rule ids")
    g.add_argument("--spread-rules", metavar="SET", help="rule set for the spread chart (default: limits-only)")
    g.add_argument("--known-mean", type=_float, metavar="MU", help="standard value of the process mean")
    g.add_argument("--known-sigma", type=_float, metavar="SIGMA", help="standard value of sigma")
    g.add_argument("--name", metavar="TEXT", help="the characteristic's name, shown on charts, fit view and reports "
                   "(default: from the value column's header, e.g. fill_mL)")
    g.add_argument("--unit", metavar="UNIT", help="its unit, e.g. mL (default: from the header when obvious)")
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
                         skip_bad=bool(args.skip_bad), characteristic=getattr(args, "characteristic", None))


_SETTING_ARGS = {"chart": "chart", "sigma": "sigma", "rules": "rules", "spread_rules": "spread_rules",
                 "known_mean": "known_mean", "known_sigma": "known_sigma", "ewma_lambda": "ewma_lambda",
                 "ewma_l": "ewma_l", "ewma_asymptotic": "ewma_asymptotic", "cusum_k": "cusum_k",
                 "cusum_h": "cusum_h", "head_start": "cusum_head_start", "laney": "laney", "name": "name",
                 "unit": "unit"}
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


def add_open_options(p: argparse.ArgumentParser) -> None:
    """The options of ``workbench open`` (also used to open the workbench from ``watch``)."""
    p.add_argument("path", nargs="?", help="data file or case file (default: the bundled demo)")
    add_data_options(p)
    add_setup_options(p)
    p.add_argument("--author", help="author recorded in the case trail")
    p.add_argument("--case", metavar="CASE", help="case file to create for a data file")


def open_args(argv: Sequence[str]) -> argparse.Namespace:
    """Parse ``workbench open`` arguments (without the command word) into a namespace."""
    p = argparse.ArgumentParser(prog="workbench open")
    add_open_options(p)
    return p.parse_args(list(argv))
