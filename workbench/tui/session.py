"""The one place where the terminal workbench talks to a case file.

Everything here is plain Python (no Textual) and runs in worker threads: opening or creating a
case, loading its data, analysing, and every action that appends to the trail.  Each call
returns a new immutable :class:`Snapshot`; the app's message handlers own the snapshot they
were given and never touch the :class:`~workbench.core.case.casefile.Case` themselves.
"""
from __future__ import annotations

import threading
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Callable

from workbench.core.analysis import analyse, limits_snapshot
from workbench.core.case.casefile import SUFFIX, Case, default_case_path
from workbench.core.model import Analysis, Dataset, Exclusion, LayoutRequest, Settings, WorkbenchError

from workbench.tui.view import Marks, limits_change, marks_for

Progress = Callable[[str, float], None]
"""progress(what, fraction 0..1) — called from the worker thread."""


@dataclass(frozen=True)
class OpenRequest:
    """What to open, as given on the command line."""

    path: Path
    """A data file or a case file (``*.case.json``)."""
    request: LayoutRequest = LayoutRequest()
    """Layout options for a data file."""
    settings: Settings = Settings()
    """Setup for a new case."""
    author: str | None = None
    """Author for the trail (None: WORKBENCH_AUTHOR or user@host)."""
    case_path: Path | None = None
    """Case file to create for a data file (None: ``casefiles/<stem>.case.json``)."""
    reuse: str = "ask"
    """When a case for the data exists: ask | reuse | new."""
    dataset: Dataset | None = None
    """A dataset already in memory (generated data for the benchmark and tests)."""
    mapped: bool = False
    """The layout request came from the mapping dialog (any load error asks again)."""
    settings_given: bool = False
    """Setup options were given on the command line (they apply to a new case only)."""
    source: object = None
    """A database table or query (``SqlSource``) to read instead of the file ``path``."""
    specs: dict | None = None
    """Specifications per characteristic (``--specs``), used when no --lsl/--usl was given."""

    @property
    def is_case(self) -> bool:
        return str(self.path).endswith(SUFFIX)


@dataclass(frozen=True, eq=False)
class Snapshot:
    """Everything the views show, as of one point of the trail (immutable)."""

    dataset: Dataset
    analysis: Analysis
    state: object
    """The case's CaseState."""
    events: tuple
    """The trail (casefile Event objects)."""
    marks: Marks
    """Point classes, signal states and counts for the views."""
    case_path: Path
    readonly_reason: str | None
    author: str

    @property
    def case_name(self) -> str:
        return self.case_path.name

    @property
    def readonly(self) -> bool:
        return self.readonly_reason is not None


@dataclass(frozen=True, eq=False)
class Change:
    """The outcome of one action: the new snapshot and a plain-words summary."""

    snapshot: Snapshot
    title: str
    lines: tuple[str, ...]


class NeedMapping(WorkbenchError):
    """The layout of a data file could not be detected: the user must map the columns."""

    def __init__(self, message: str, path: Path, columns: tuple[str, ...], samples: dict[str, str]):
        super().__init__(message)
        self.path, self.columns, self.samples = path, columns, samples


class CaseExists(WorkbenchError):
    """A case for this data file already exists (the user chooses to reuse it or start anew)."""

    def __init__(self, case_path: Path, summary: str):
        super().__init__(f"{case_path} already exists")
        self.case_path, self.summary = case_path, summary


def is_detection_error(exc: WorkbenchError) -> bool:
    """True for the load errors a column mapping can fix (the layout was not detected)."""
    text = str(exc)
    return "give --" in text or "no column '" in text or "the summary layout needs" in text


def free_case_path(path: Path) -> Path:
    """``x.case.json`` when free, else ``x-2.case.json``, ``x-3.case.json`` ..."""
    if not path.exists():
        return path
    stem = path.name[: -len(SUFFIX)]
    n = 2
    while (path.with_name(f"{stem}-{n}{SUFFIX}")).exists():
        n += 1
    return path.with_name(f"{stem}-{n}{SUFFIX}")


def case_summary(path: Path) -> str:
    """One line about an existing case (events, last change) without taking its lock."""
    try:
        case = Case.open(path, readonly=True)
    except WorkbenchError as exc:
        return f"it cannot be read: {exc}"
    last = case.events[-1]
    n = len(case.events)
    return (f"{n} event{'s' if n != 1 else ''} in its trail, last by {last.author}; "
            f"{len(case.state.exclusions)} exclusion(s)")


def read_columns(path: Path) -> tuple[tuple[str, ...], dict[str, str]]:
    """The column names of a data file and a few sample cells of each (for the mapping dialog)."""
    from workbench.core.data.reader import read_any
    table = read_any(path)
    cols = tuple(str(c) for c in table.frame.columns)
    samples = {c: ", ".join(str(v) for v in table.frame[c].head(3).tolist()) for c in cols}
    return cols, samples


def _load(path: Path, request: LayoutRequest, mapped: bool = False) -> Dataset:
    from workbench.core.data.characteristics import ManyCharacteristics
    from workbench.core.data.reader import load
    try:
        return load(str(path), request)
    except ManyCharacteristics:
        raise
    except WorkbenchError as exc:
        if mapped or is_detection_error(exc):
            cols, samples = read_columns(path)
            raise NeedMapping(str(exc), path, cols, samples) from None
        raise


def _load_source(req: OpenRequest) -> Dataset:
    from workbench.core.data.reader import load
    return load(req.source, req.request)


def open_session(req: OpenRequest, progress: Progress = lambda what, f: None) -> "Session":
    """Open or create the case that ``req`` names (raises CaseExists / NeedMapping / WorkbenchError)."""
    if req.is_case:
        progress(f"opening {req.path.name}", 0.05)
        case = Case.open(req.path, author=req.author)
        try:
            progress(f"reading {case.data.source.shown if case.data.source else Path(case.data.path).name}", 0.2)
            dataset = case.load_dataset()
            progress(f"analysing {dataset.m:,} subgroups", 0.6)
            analysis = case.analyse(dataset)
        except BaseException:
            case.close()
            raise
        return Session(case, dataset, analysis, created=False)
    case_path = Path(req.case_path) if req.case_path else default_case_path(req.path, req.request.characteristic)
    if case_path.exists():
        if req.reuse == "ask":
            raise CaseExists(case_path, case_summary(case_path))
        if req.reuse == "reuse":
            return open_session(replace(req, path=case_path, reuse="ask"), progress)
        case_path = free_case_path(case_path)
    if req.dataset is not None:
        dataset = req.dataset
    else:
        progress(f"reading {req.source.shown if req.source is not None else req.path.name}", 0.1)
        dataset = _load(req.path, req.request, req.mapped) if req.source is None else _load_source(req)
    if req.specs and dataset.characteristic:
        from workbench.core.overview import settings_for
        req = replace(req, settings=settings_for(req.settings, req.specs.get(dataset.characteristic)))
    progress(f"analysing {dataset.m:,} subgroups", 0.6)
    analysis = analyse(dataset, req.settings)
    progress(f"creating {case_path.name}", 0.9)
    case = Case.create_for(dataset, req.request, req.settings, req.author, case_path,
                           limits=limits_snapshot(analysis))
    return Session(case, dataset, analysis, created=True)


class Session:
    """A case open in the workbench with its data; every method runs in a worker thread."""

    def __init__(self, case: Case, dataset: Dataset, analysis: Analysis, created: bool = False):
        self.case, self.dataset, self.analysis = case, dataset, analysis
        self.created = created
        """True when this session created the case (False: an existing case was opened)."""
        self.notices = tuple(case.notices) + tuple(dataset.notices)
        self.lock = threading.RLock()
        """Held by every action and every look at a followed file (they run in different workers)."""
        self.watch = None
        """The Phase II watch while the data file is followed (see :mod:`workbench.tui.follow`)."""

    # -- reading

    def snapshot(self) -> Snapshot:
        case = self.case
        if self.dataset.extras:  # the context ranking and change positions, here in the worker, not on a keypress
            from workbench.core.context.leads import change_positions, signal_anchors
            from workbench.core.context.ranking import context_of
            context_of(self.analysis)
            change_positions(self.dataset)
            signal_anchors(self.analysis)
        return Snapshot(self.dataset, self.analysis, case.state, tuple(case.events),
                        marks_for(self.analysis, case.state), case.path, case.readonly_reason, case.author)

    def close(self) -> None:
        self.case.close()

    def take_lock(self) -> bool:
        """Try once to become the writer of a case that opened read-only because another session
        held it; True when it is writable now (the state is reloaded: the other writer may have
        added events)."""
        with self.lock:
            if self.case.holder is None or not self.case.readonly:
                return False
            fresh = Case.open(self.case.path, author=self.case.author)
            if fresh.readonly:
                self.case.readonly_reason, self.case.holder = fresh.readonly_reason, fresh.holder
                fresh.close()
                return False
            self.case.close()
            self.case = fresh
            self.analysis = fresh.analyse(self.dataset)
            return True

    # -- actions (each appends one event to the trail)

    def _limits_change(self, before: Analysis, title: str, extra: tuple[str, ...] = ()) -> Change:
        lines = extra + tuple(limits_change(limits_snapshot(before), limits_snapshot(self.analysis)))
        return Change(self.snapshot(), title, lines)

    def exclude(self, target: Exclusion, reason: str, cause: str | None = None,
                signal: str | None = None) -> Change:
        before = self.analysis
        self.analysis = self.case.record_exclusion(self.dataset, target, reason, cause, signal)
        return self._limits_change(before, f"Excluded {target.key}")

    def restore(self, target: Exclusion, reason: str) -> Change:
        before = self.analysis
        self.analysis = self.case.record_restore(self.dataset, target, reason)
        return self._limits_change(before, f"Restored {target.key}")

    def change_settings(self, settings: Settings) -> Change:
        from workbench.core.case.events import settings_changes
        before, old = self.analysis, self.case.state.settings
        self.analysis = self.case.record_settings(self.dataset, settings)
        return self._limits_change(before, "Setup changed", tuple(settings_changes(old, settings)))

    def change_mapping(self, request: LayoutRequest, settings: Settings | None = None) -> Change:
        """Map the file's columns differently (one setup event holding the mapping; the data reloaded)."""
        from workbench.core.case.events import settings_changes
        from workbench.core.report import describe_mapping
        before, old = self.analysis, self.case.state.settings
        request = self._keep(request)
        new = self.case.load_dataset(request)
        self.analysis = self.case.record_mapping(self.dataset, new, request, settings)
        self.dataset = new
        extra = (f"columns: {describe_mapping(self.analysis)}",) + tuple(settings_changes(old, self.case.state.settings))
        return self._limits_change(before, "Column mapping changed", extra)

    def check_mapping(self, request: LayoutRequest) -> Dataset:
        """The data under ``request`` (raises WorkbenchError with the one-line reason it does not load)."""
        new = self.case.load_dataset(self._keep(request))
        self.case.check_mapping(new)
        return new

    def _keep(self, request: LayoutRequest) -> LayoutRequest:
        """``request`` with what the setup does not map kept as it is (characteristic, skipping bad cells)."""
        from dataclasses import replace
        cur = self.case.request
        return replace(request, characteristic=cur.characteristic, skip_bad=cur.skip_bad)

    def freeze(self, reason: str | None = None) -> Change:
        before = self.analysis
        self.analysis = self.case.record_freeze(self.dataset, force=bool(reason), reason=reason)
        return self._limits_change(before, "Limits frozen")

    def unfreeze(self, reason: str) -> Change:
        before = self.analysis
        self.analysis = self.case.record_unfreeze(self.dataset, reason)
        return self._limits_change(before, "Limits unfrozen")

    def mark(self, key: str, state: str, note: str | None) -> Change:
        before = self.snapshot().marks
        self.case.record_mark(self.dataset, key, state, note or None)
        snap = self.snapshot()
        lines = (f"open signals {before.open_count} → {snap.marks.open_count}",
                 "the limits do not change (the points stay in)")
        return Change(snap, f"Signal marked {state}", lines)

    def note(self, text: str, target: str | None, on: str) -> Change:
        self.case.note(text, target, on)
        return Change(self.snapshot(), "Note added", ())

    # -- a range of subgroups, several signals, retractions (one event each)

    def exclude_range(self, first: int, last: int, reason: str, cause: str | None = None) -> Change:
        from workbench.core.case.ranges import exclude_range
        before = self.analysis
        self.analysis = exclude_range(self.case, self.dataset, first, last, reason, cause)
        return self._limits_change(before, f"Excluded {self.case.events[-1].payload['range']['count']} subgroups")

    def restore_range(self, first: int, last: int, reason: str) -> Change:
        from workbench.core.case.ranges import restore_range
        before = self.analysis
        self.analysis = restore_range(self.case, self.dataset, first, last, reason)
        return self._limits_change(before, f"Restored {self.case.events[-1].payload['range']['count']} subgroups")

    def note_range(self, first: int, last: int, text: str) -> Change:
        from workbench.core.case.ranges import note_range
        note_range(self.case, self.dataset, first, last, text)
        return Change(self.snapshot(), f"Note added on {last - first + 1} subgroups", ())

    def mark_many(self, keys: list[str], state: str, note: str | None, span: tuple[int, int] | None = None) -> Change:
        from workbench.core.case.ranges import mark_many
        before = self.snapshot().marks
        mark_many(self.case, keys, state, note or None, span=(self.dataset, *span) if span else None)
        snap = self.snapshot()
        lines = (f"open signals {before.open_count} → {snap.marks.open_count}",
                 "the limits do not change (the points stay in)")
        return Change(snap, f"{len(keys)} signal{'s' if len(keys) != 1 else ''} marked {state}", lines)

    def retract(self, seq: int, reason: str) -> Change:
        from workbench.core.case.ranges import retract
        before = self.analysis
        after = retract(self.case, self.dataset, seq, reason)
        if after is not None:
            self.analysis = after
            return self._limits_change(before, f"Event {seq} retracted")
        return Change(self.snapshot(), f"Event {seq} retracted", ("the original stays in the trail, marked retracted",))

    def set_author(self, author: str) -> Snapshot:
        if not author.strip():
            raise WorkbenchError("the author needs some text")
        self.case.author = author.strip()
        return self.snapshot()

    def verify(self):
        from workbench.core.case.casefile import verify
        return verify(self.case.path)
