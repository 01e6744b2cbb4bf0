"""Following a case's data file from the workbench (Phase II): plain Python, run in worker threads.

The :class:`~workbench.core.phase2.judge.Watch` shares the session's case.  Every look (and every
action of the user) holds ``session.lock``, so a poll never runs while an action writes the
trail, and the session's dataset and analysis always are the watch's.
"""
from __future__ import annotations

from dataclasses import dataclass

from workbench.core.model import WorkbenchError

from workbench.tui.session import Session, Snapshot
from workbench.tui.view import safe

MOST_NOTICES = 3
"""New signals of one look that get a notification each; the rest are counted in one more."""


@dataclass(frozen=True, eq=False)
class Look:
    """One look at the followed file, made in a worker: the judgement and what the views need."""

    judgement: object
    """The core's Judgement (positions, signals, began_before, status, ok, message)."""
    snapshot: Snapshot | None
    """The new snapshot (None when the look judged no new subgroup)."""
    recorded: bool
    """A ``data-appended`` event was written to the trail."""
    path: str
    """The file followed."""
    started: bool = False
    """The first look, when following began."""
    by: str = ""
    """`` by key COLUMN`` for a database source (else empty)."""


def start(session: Session, key: str | None = None) -> Look:
    """Begin following the case's data file or database (the limits must be frozen) and judge what is new.

    ``key``: a database source's increasing column, when the case does not record it yet."""
    from workbench.core.phase2.judge import Watch
    with session.lock:
        if session.watch is not None:
            raise WorkbenchError(f"already following {session.watch.follower.path}")
        watch = Watch.start(session.case, key)
        j = watch.catch_up()
        session.watch = watch
        session.dataset, session.analysis = watch.dataset, watch.analysis
        recorded = watch.record(j) is not None
        src = getattr(watch.follower, "source", None)
        by = f" by key {src.key}" if src is not None else ""
        return Look(j, session.snapshot(), recorded, str(watch.follower.path), started=True, by=by)


def poll(session: Session) -> Look:
    """Read what was appended and judge the new subgroups against the frozen limits."""
    with session.lock:
        watch = session.watch
        if watch is None:
            raise WorkbenchError("not following the data file")
        j = watch.poll()
        session.dataset, session.analysis = watch.dataset, watch.analysis
        recorded = watch.record(j) is not None
        if not j.ok:
            session.watch = None
        return Look(j, session.snapshot() if j.positions else None, recorded, str(watch.follower.path))


def stop(session: Session) -> None:
    """Stop following (without the lock: a look still running finishes, and is the last)."""
    session.watch = None


def sync(session: Session) -> str | None:
    """After an action (holding the lock): the watch analyses again; returns why it stopped, if it did."""
    watch = session.watch
    if watch is None:
        return None
    if session.case.state.frozen != watch.frozen or watch.analysis is not session.analysis:
        try:
            session.analysis = watch.reanalyse()  # the case's cache: the action just analysed these data
        except WorkbenchError as exc:
            session.watch = None
            return str(exc)
    return None


def signal_words(look: Look) -> list[str]:
    """One line per new signal (at most MOST_NOTICES, then a count of the rest)."""
    j = look.judgement
    labels = j.analysis.dataset.labels
    out = []
    for s in j.signals[:MOST_NOTICES]:
        since = f" (began at {safe(labels[s.first])})" if s.key in j.began_before else ""
        out.append(f"subgroup {safe(labels[s.last])}: {s.chart} {s.rule} — {s.description}{since}")
    rest = len(j.signals) - MOST_NOTICES
    if rest > 0:
        out.append(f"and {rest} more new signal{'' if rest == 1 else 's'} (see the signals list)")
    return out
