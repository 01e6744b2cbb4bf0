"""``workbench verify``: check a case file end to end without changing anything."""
from __future__ import annotations

import dataclasses

import math
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterable

from workbench.core.case.anchors import bak_finding, check_anchor, edited_text, repair_remarks
from workbench.core.case.events import CaseState, Event, _Builder
from workbench.core.case.format import (
    DataStatus, Document, build, canonical_json, chain_break, check_data, jsonable, read_bytes, read_json, render,
)
from workbench.core.model import Dataset, LayoutRequest, WorkbenchError


@dataclass(frozen=True)
class Verification:
    """The result of checking a case file end to end."""

    path: str
    """The case file checked."""
    intact: bool
    """True only when the chain is whole, the trail replays, the data are unchanged (or only appended to)
    and the recorded limits agree with a recomputation."""
    events: int
    """Number of events in the trail."""
    head_hash: str | None
    """Hash of the last event (what a reviewer signs)."""
    chain_break: tuple[int, str] | None
    """(event number, reason) at the first break of the chain."""
    data: DataStatus | None
    """The data fingerprint check (None when the file could not be replayed)."""
    problems: tuple[str, ...]
    """Everything that makes the case not intact, first problem first."""
    remarks: tuple[str, ...] = ()
    """Things worth knowing that do not break integrity (appended data, limits not recomputed)."""

    def lines(self) -> list[str]:
        if self.intact:
            head = f"{self.path}: intact — {self.events} events, head hash {self.head_hash}"
        else:
            head = f"{self.path}: NOT intact — {self.problems[0]}"
        return [head] + [f"  also: {p}" for p in self.problems[1:]] + [f"  note: {r}" for r in self.remarks]


def verify(path: str | Path, recompute: bool = True, expect_head: str | None = None,
           signers: str | Path | None = None) -> Verification:
    """Check a case file: hash chain, replay, data fingerprints, the ``.bak`` beside it, sign-offs
    (against an allowed-signers file when ``signers`` is given), an expected head (``expect_head``,
    12 or more hex digits) and (``recompute``) the recorded limits.

    Raises WorkbenchError only when the file cannot be read as a case file at all (missing,
    not JSON, a newer format version).  Never writes anything.
    """
    path = Path(path)
    raw = read_bytes(path)
    top = read_json(raw, str(path))
    try:
        doc = build(top, str(path))
    except WorkbenchError as exc:
        broken = chain_break(top)
        problems = [f"the chain breaks at event {broken[0]}: {broken[1]}"] if broken else []
        if expect_head:
            problems.append(f"the expected head {expect_head} could not be looked for: the trail does not replay")
        return Verification(str(path), False, len(top["trail"]), None, broken, None, tuple(problems + [str(exc)]))
    broken = doc.chain_break
    problems = [f"the chain breaks at event {broken[0]}: {broken[1]}"] if broken else []
    if not broken:
        edited = edited_text(raw, doc)
        if edited:
            problems.append(edited)
    bak = bak_finding(path, doc.events)
    if bak:
        problems.append(bak[1])
    remarks: list[str] = repair_remarks(doc.events)
    if expect_head is not None:
        on_chain, words = check_anchor(doc.events, broken, expect_head)
        (remarks if on_chain else problems).append(words)
    if any(ev.kind == "sign-off" for ev in doc.events):
        from workbench.core.case.signoff import check_signoffs
        bad, good = check_signoffs(doc.events, signers)
        problems += bad
        remarks += good
    elif signers is not None:
        problems.append("the trail holds no sign-off to check against the signers file")
    status = check_data(doc.data, path, doc.events)
    if not status.usable:
        problems.append(status.message)
    elif status.status == "appended":
        remarks.append(status.message)
    if recompute and status.usable and not broken:
        problems += _recompute_limits(doc, status)
    else:
        problems += limits_gaps(doc.events)
        if recompute:
            remarks.append("the recorded limits were only compared along the trail, not recomputed "
                           "(the chain or the data do not allow it)")
    return Verification(str(path), not problems, len(doc.events), doc.state.head_hash, broken, status,
                        tuple(problems), tuple(remarks))


def _recompute_limits(doc: Document, status: DataStatus) -> list[str]:
    from workbench.core.analysis import analyse, limits_snapshot
    from workbench.core.data.reader import load
    datasets: dict[tuple, Dataset] = {}
    snaps: dict[tuple, dict] = {}

    def dataset_for(nbytes: int, request: LayoutRequest) -> Dataset:
        """The data as an event saw them: its bytes (or rows), under the column mapping in force then."""
        key = (nbytes, canonical_json(request.as_dict()))
        if key not in datasets:
            if doc.data.source is not None and (nbytes == status.size_bytes or not doc.data.source.aggregate):
                # a database: its rows read again (the first rows of that size, in the watch's key order)
                from workbench.core.phase2.judge import recorded_key
                from workbench.core.phase2.sqlfollow import load_rows_prefix
                src = dataclasses.replace(doc.data.source, key=recorded_key(doc))
                datasets[key] = load(src, request) if src.aggregate else \
                    load_rows_prefix(src, request, None if nbytes == status.size_bytes else nbytes)
            elif nbytes == status.size_bytes:
                datasets[key] = load(str(status.path), request)
            elif nbytes > (status.size_bytes or 0):
                raise WorkbenchError(f"it was computed on {nbytes} bytes of data; the file now has {status.size_bytes}")
            else:
                with tempfile.TemporaryDirectory() as tmp, open(status.path, "rb") as src:
                    prefix = Path(tmp) / status.path.name
                    prefix.write_bytes(src.read(nbytes))
                    datasets[key] = load(str(prefix), request)
        return datasets[key]

    def snapshot(nbytes: int, st: CaseState) -> dict:
        key = (nbytes, st.seq)  # the state after event seq: O(1) to name, however many exclusions it holds
        if key not in snaps:
            ds = dataset_for(nbytes, st.request if st.request is not None else doc.data.request)
            snaps[key] = jsonable(limits_snapshot(analyse(ds, st.settings, st.exclusions, st.frozen)))
        return snaps[key]

    problems: list[str] = []
    builder = _Builder()  # one replay, followed event by event; a state is made only where limits are recorded
    for ev in doc.events:
        nbytes = doc.data.size_bytes if ev.data_bytes is None else ev.data_bytes
        before = builder.state() if ev.limits_before is not None and builder.seq and \
            (nbytes, builder.seq) not in snaps else None
        builder.apply(ev)
        after = builder.state() if ev.limits_after is not None else None
        for when, recorded, st, seq in (("before", ev.limits_before, before, ev.seq - 1),
                                        ("after", ev.limits_after, after, ev.seq)):
            if recorded is None or (st is None and (nbytes, seq) not in snaps):
                continue
            try:
                diff = snapshot_difference(recorded, snaps[(nbytes, seq)] if st is None else snapshot(nbytes, st))
            except WorkbenchError as exc:
                problems.append(f"event {ev.seq}: its limits could not be recomputed: {exc}")
                return problems
            if diff:
                problems.append(f"event {ev.seq}: the limits recorded {when} the action differ from a recomputation "
                                f"({diff})")
    return problems


def snapshot_difference(recorded: Any, computed: Any, rel: float = 1e-9, path: str = "") -> str | None:
    """Where two limits snapshots differ (numbers compared with relative tolerance ``rel``), or None."""
    here = path or "limits"
    if isinstance(recorded, dict) and isinstance(computed, dict):
        for key in sorted(set(recorded) | set(computed), key=str):
            if key not in recorded or key not in computed:
                return f"{path}{key}: present in only one of them"
            diff = snapshot_difference(recorded[key], computed[key], rel, f"{path}{key}.")
            if diff:
                return diff
        return None
    here = here.rstrip(".")
    if isinstance(recorded, list) and isinstance(computed, list):
        if len(recorded) != len(computed):
            return f"{here}: {len(recorded)} values recorded, {len(computed)} recomputed"
        for i, (a, b) in enumerate(zip(recorded, computed)):
            diff = snapshot_difference(a, b, rel, f"{path.rstrip('.')}[{i}].")
            if diff:
                return diff
        return None
    numbers = all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in (recorded, computed))
    if numbers:
        if math.isclose(recorded, computed, rel_tol=rel, abs_tol=1e-300):
            return None
    elif recorded == computed:
        return None
    return f"{here}: recorded {recorded!r}, recomputed {computed!r}"


def limits_gaps(events: Iterable[Event]) -> list[str]:
    """Events whose limits before differ from the limits after the previous limit-changing event
    (on the same data); the check that needs no data."""
    problems, last = [], None
    for ev in events:
        if ev.limits_before is not None and last is not None and last[0] == ev.data_bytes:
            diff = snapshot_difference(last[1], ev.limits_before)
            if diff:
                problems.append(f"event {ev.seq}: its limits before do not follow the previous limits ({diff})")
        if ev.limits_after is not None:
            last = (ev.data_bytes, ev.limits_after)
    return problems
