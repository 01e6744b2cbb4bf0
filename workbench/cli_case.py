"""Headless case commands: ``workbench case ...`` and ``workbench verify``.

Each action opens the case, appends one event (written at once, atomically) and closes it.
Messages about the case (data grown, lock taken over) go to stderr; the result to stdout.
"""
from __future__ import annotations

import argparse
import sys
from typing import Any

from workbench.core.case.events import MARKS, Event, describe_trail, printable
from workbench.core.model import Exclusion, WorkbenchError
from workbench.core.text import change_texts, fmt


def _notices(case: Any) -> None:
    for n in case.notices:
        print(f"workbench: {printable(n)}", file=sys.stderr)


DEFAULT_WAIT = 10.0
"""Seconds a case action waits for another writer's lock before giving up (exit 3)."""


def _open(args: argparse.Namespace, readonly: bool = False):
    from workbench.core.case.casefile import Case
    from workbench.core.case.disk import CaseBusy
    case = Case.open(args.case, readonly=readonly, author=getattr(args, "author", None),
                     wait=getattr(args, "wait", DEFAULT_WAIT), repair=getattr(args, "repair", None))
    if case.readonly and not readonly:
        case.close()
        if case.holder is not None:
            raise CaseBusy(f"{args.case} is busy: open for writing by {case.holder.words()}; waited "
                           f"{getattr(args, 'wait', DEFAULT_WAIT):g} s (--wait SECONDS to wait longer)")
        raise WorkbenchError(f"cannot change {args.case}: {case.readonly_reason}")
    _notices(case)
    return case


def _seconds(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"not a number of seconds: {text!r}") from None
    if not (0 <= v < 1e6):
        raise argparse.ArgumentTypeError(f"--wait takes 0 or more seconds, not {text!r}")
    return v


def _limit_lines(ev: Event) -> list[str]:
    before = (ev.limits_before or {}).get("charts") or {}
    after = (ev.limits_after or {}).get("charts") or {}
    out = []
    for name in dict.fromkeys([*before, *after]):
        a, b = before.get(name) or {}, after.get(name) or {}
        parts = [f"{label} {' → '.join(change_texts(a.get(k), b.get(k)))}" for k, label in
                 (("center", "centre"), ("lcl", "LCL"), ("ucl", "UCL")) if a.get(k) != b.get(k)]
        if parts:
            out.append(f"  {name}: " + ", ".join(parts))
    return out or (["  limits unchanged"] if ev.limits_after is not None else [])


def _done(case: Any) -> int:
    ev = case.events[-1]
    print(f"{printable(str(case.path))}: event {ev.seq}: {describe_trail(case.events)[-1]}")
    for line in _limit_lines(ev):
        print(line)
    return 0


def cmd_new(args: argparse.Namespace) -> int:
    from workbench.options import layout_request_from_args, settings_from_args
    from workbench.core.analysis import analyse, limits_snapshot
    from workbench.core.case.casefile import Case
    from workbench.core.data.reader import load
    from workbench.demo import demo_settings_for
    request = layout_request_from_args(args)
    settings = settings_from_args(args, demo_settings_for(args.data))
    from workbench.options import data_source
    dataset = load(data_source(args.data, args), request)
    if getattr(args, "specs", None) and dataset.characteristic:
        from workbench.core.data.characteristics import read_specs
        from workbench.core.overview import settings_for
        settings = settings_for(settings, read_specs(args.specs).get(dataset.characteristic))
    analysis = analyse(dataset, settings)
    with Case.create_for(dataset, request, settings, args.author, args.output, limits_snapshot(analysis)) as case:
        print(f"{printable(str(case.path))}: created for {printable(dataset.source.shown if dataset.source else args.data)} — {dataset.m} subgroups, "
              f"{analysis.chart} chart, {len(analysis.signals)} signal(s)")
    return 0


def cmd_exclude(args: argparse.Namespace) -> int:
    from workbench.core.case.ranges import exclude_range, parse_range
    with _open(args) as case:
        ds = case.load_dataset()
        span = parse_range(ds, args.target)
        if span is not None:
            if args.signal:
                raise WorkbenchError("--signal names one signal; a range answers every signal in it")
            exclude_range(case, ds, *span, args.reason, args.cause)
        else:
            case.record_exclusion(ds, ds.target(args.target), args.reason, args.cause, args.signal)
        return _done(case)


def cmd_restore(args: argparse.Namespace) -> int:
    from workbench.core.case.ranges import parse_range, restore_range
    with _open(args) as case:
        ds = case.load_dataset()
        span = parse_range(ds, args.target)
        if span is not None:
            restore_range(case, ds, *span, args.reason)
        else:
            case.record_restore(ds, ds.target(args.target), args.reason)
        return _done(case)


def cmd_note(args: argparse.Namespace) -> int:
    from workbench.core.case.ranges import note_range, parse_range
    with _open(args) as case:
        ds = case.load_dataset() if args.target else None
        span = parse_range(ds, args.target) if ds is not None else None
        if span is not None:
            note_range(case, ds, *span, args.text)
            return _done(case)
        on = case.note_target(ds, args.target) if args.target else "case"
        case.note(args.text, args.target, on)
        return _done(case)


def cmd_retract(args: argparse.Namespace) -> int:
    from workbench.core.case.ranges import last_retractable, retract
    with _open(args) as case:
        seq = args.event
        if seq is None:
            last = last_retractable(case)
            if last is None:
                raise WorkbenchError(f"{case.author} has no note, mark, exclusion or restore left to retract "
                                     "(give the event number)")
            seq = last.seq
        target = case.events[seq - 1] if 1 <= seq <= len(case.events) else None
        needs_data = target is not None and target.kind in ("exclude", "restore")
        retract(case, case.load_dataset() if needs_data else None, seq, args.reason)
        return _done(case)


def cmd_mark(args: argparse.Namespace) -> int:
    from workbench.core.case.ranges import mark_many, parse_range, signals_in
    with _open(args) as case:
        ds = case.load_dataset()
        span = parse_range(ds, args.key)
        if span is not None:
            a = case.analyse(ds)
            mark_many(case, signals_in(a, *span), args.state, args.note, span=(ds, *span), analysis=a)
            return _done(case)
        if args.key not in case.state.signal_states:
            keys = {s.key for s in case.analyse(ds).signals}
            if args.key not in keys:
                raise WorkbenchError(f"no signal {args.key!r} in this case (workbench report {args.case} lists them)")
        case.record_mark(ds, args.key, args.state, args.note)
        return _done(case)


MAPPING_ARGS = {"layout": "kind", "subgroup": "subgroup", "stream": "stream", "value": "value", "time": "time"}
"""``case set`` options that map the data file's columns anew (the names of ``LayoutRequest`` fields)."""


def cmd_set(args: argparse.Namespace) -> int:
    from workbench.core.model import LayoutRequest
    from workbench.options import settings_from_args
    with _open(args) as case:
        settings = settings_from_args(args, case.state.settings)
        given = {field: getattr(args, arg) for arg, field in MAPPING_ARGS.items() if getattr(args, arg, None)}
        if getattr(args, "streams", None):
            given["streams"] = [x.strip() for x in args.streams.split(",") if x.strip()]
        if not given:
            case.record_settings(case.load_dataset(), settings)
            return _done(case)
        request = LayoutRequest.from_dict({**case.request.as_dict(), **given})
        case.record_mapping(case.load_dataset(), case.load_dataset(request), request, settings)
        return _done(case)


def cmd_freeze(args: argparse.Namespace) -> int:
    with _open(args) as case:
        case.record_freeze(case.load_dataset(), force=args.force, reason=args.reason)
        return _done(case)


def cmd_unfreeze(args: argparse.Namespace) -> int:
    with _open(args) as case:
        case.record_unfreeze(case.load_dataset(), args.reason)
        return _done(case)


def cmd_causes(args: argparse.Namespace) -> int:
    if not args.add and not args.remove:
        from workbench.core.case.casefile import Case
        case = Case.open(args.case, readonly=True)
        print(", ".join(printable(c) for c in case.state.causes))
        return 0
    with _open(args) as case:
        for name in args.add or ():
            case.add_cause(name)
        for name in args.remove or ():
            case.remove_cause(name)
        print(f"{printable(str(case.path))}: causes now " + ", ".join(printable(c) for c in case.state.causes))
    return 0


def cmd_show(args: argparse.Namespace) -> int:
    from workbench.core.case.review import case_report_text
    case = _open(args, readonly=True)
    if getattr(args, "head", False):  # just the hash to keep as an anchor (verify --expect-head)
        print(case.events[-1].hash if case.events else "")
        return 0
    analysis = case.analyse(case.load_dataset()) if case.data_status.usable else None
    sys.stdout.write(case_report_text(case, analysis))
    return 0


def cmd_sign(args: argparse.Namespace) -> int:
    with _open(args) as case:
        ev = case.sign(args.key)
        print(f"{printable(str(case.path))}: event {ev.seq}: {describe_trail(case.events)[-1]}")
        print(f"  head hash to quote: {ev.hash}")
    return 0


def cmd_verify(args: argparse.Namespace) -> int:
    from workbench.core.case.casefile import verify
    result = verify(args.case, recompute=not args.no_recompute, expect_head=args.expect_head, signers=args.signers)
    for line in result.lines():
        print(printable(line))
    return 0 if result.intact else 1


def register(subparsers: Any) -> None:
    """Add the ``case`` and ``verify`` sub-commands to the main parser's subparsers."""
    from workbench.options import add_data_options, add_setup_options
    case = subparsers.add_parser("case", help="create a case file and record actions in its trail")
    sub = case.add_subparsers(dest="case_command", metavar="ACTION", required=True)

    def action(name: str, func, helptext: str, with_case: bool = True) -> argparse.ArgumentParser:
        p = sub.add_parser(name, help=helptext, description=helptext)
        if with_case:
            p.add_argument("case", metavar="CASE", help="the case file (*.case.json)")
        p.add_argument("--author", help="who does this (default: $WORKBENCH_AUTHOR, else user@host)")
        if with_case:
            p.add_argument("--wait", type=_seconds, default=DEFAULT_WAIT, metavar="SECONDS",
                           help=f"wait this long for another writer (default {DEFAULT_WAIT:g}); then exit 3")
            p.add_argument("--repair", metavar="REASON", help="write on a case that does not verify, recording a "
                           "repair event that states what was found")
        p.set_defaults(func=func)
        return p

    p = action("new", cmd_new, "create a case file for a data file", with_case=False)
    p.add_argument("data", metavar="DATA", help="data file (CSV, TSV, XLSX)")
    p.add_argument("-o", "--output", metavar="CASE", help="case file to write (default: casefiles/<data>.case.json)")
    add_data_options(p)
    add_setup_options(p)
    for name, func, words in (("exclude", cmd_exclude, "leave a subgroup or one reading out of the limits"),
                              ("restore", cmd_restore, "put an excluded subgroup or reading back")):
        p = action(name, func, words)
        p.add_argument("target", metavar="SUBGROUP[:STREAM]|FIRST..LAST",
                       help="subgroup label, label:stream for one reading, or a range FIRST..LAST (labels or "
                            "1-based positions, inclusive; one event for the whole range)")
        p.add_argument("--reason", required=True, help="why (required)")
        if name == "exclude":
            p.add_argument("--cause", metavar="CATEGORY", help="cause category from the case's list")
            p.add_argument("--signal", metavar="KEY", help="the signal this exclusion answers")
    p = action("note", cmd_note, "add a note on the case, a subgroup or a signal")
    p.add_argument("target", nargs="?", metavar="TARGET",
                   help="a subgroup label (or LABEL:STREAM), a range FIRST..LAST, or a signal key")
    p.add_argument("text", metavar="TEXT", help="the note (quote it)")
    p = action("mark", cmd_mark, "set a signal's state")
    p.add_argument("key", metavar="SIGNAL-KEY|FIRST..LAST",
                   help="e.g. xbar/beyond-limits/17, or a range: every signal that fired in it (one event)")
    p.add_argument("state", choices=MARKS)
    p.add_argument("--note", help="what was found")
    p = action("retract", cmd_retract, "take back a note, mark, exclusion or restore (a new event; nothing "
                                         "is deleted)")
    p.add_argument("event", nargs="?", type=int, metavar="EVENT",
                   help="the event number in the trail (default: your own last such action)")
    p.add_argument("--reason", required=True, help="why (required)")
    p = action("set", cmd_set, "change the setup (chart, rules, specification, column mapping)")
    add_setup_options(p)
    m = p.add_argument_group("column mapping (recorded in the trail; refused while the limits are frozen)")
    m.add_argument("--layout", choices=("long", "wide", "individuals"), help="how the file is arranged")
    m.add_argument("--subgroup", metavar="COL", help="column with the subgroup key")
    m.add_argument("--stream", metavar="COL", help="long layout: column naming the stream")
    m.add_argument("--value", metavar="COL", help="column with the reading")
    m.add_argument("--time", metavar="COL", help="column with a timestamp (rows are sorted by it)")
    m.add_argument("--streams", metavar="A,B,C", help="wide layout: the stream columns")
    p = action("freeze", cmd_freeze, "freeze the current limits for new data (Phase II)")
    p.add_argument("--force", action="store_true", help="freeze although signals are still open (needs --reason)")
    p.add_argument("--reason", help="why the limits are frozen with open signals (recorded in the trail)")
    p = action("unfreeze", cmd_unfreeze, "unfreeze the limits")
    p.add_argument("--reason", required=True, help="why (required)")
    p = action("causes", cmd_causes, "show or edit the case's list of cause categories")
    p.add_argument("--add", action="append", metavar="NAME", help="add a category (repeatable)")
    p.add_argument("--remove", action="append", metavar="NAME", help="remove a category (repeatable)")
    p = action("show", cmd_show, "print the case's state and trail")
    p.add_argument("--head", action="store_true", help="print only the trail's head hash (the anchor to keep for "
                   "verify --expect-head)")
    p = action("sign", cmd_sign, "sign off the trail's head with your SSH key (ssh-keygen -Y sign)")
    p.add_argument("--key", metavar="FILE", help="SSH private key, or public key whose private half is in the agent "
                   "(default: $WORKBENCH_SIGNING_KEY, else ~/.ssh/id_ed25519, id_ecdsa, id_rsa)")

    v = subparsers.add_parser("verify", help="check a case file's integrity (exit 0 only when intact)")
    v.add_argument("case", metavar="CASE", help="the case file (*.case.json)")
    v.add_argument("--expect-head", metavar="HASH", help="fail unless the trail holds this event (12+ hex digits of "
                   "a head hash you kept) still on the chain")
    v.add_argument("--signers", metavar="FILE", help="allowed-signers file (ssh-keygen format) to check every "
                   "sign-off against")
    v.add_argument("--no-recompute", action="store_true",
                   help="check the hash chain and the data only, not the recorded limits")
    v.set_defaults(func=cmd_verify)
