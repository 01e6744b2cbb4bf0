"""Actions on a range of subgroups, on several signals at once, and retractions.

A range ``FIRST..LAST`` names the subgroups from FIRST to LAST inclusive, each end a subgroup
label or, when no subgroup has that label, a 1-based position.  One action on a range is one
event in the trail: it carries the range's ends, the subgroups it changes and their count, and
(for exclusions) the limits before and after once.

A retraction takes back an earlier note, mark, exclusion or restore.  It is a new event that
names the retracted event (number and hash) and a reason; the original stays in the trail, and
the state is the replay of the trail without it.
"""
from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from workbench.core.case.events import RETRACTABLE, Event
from workbench.core.model import Analysis, Dataset, WorkbenchError

if TYPE_CHECKING:
    from workbench.core.case.casefile import Case


def parse_range(ds: Dataset, text: str) -> tuple[int, int] | None:
    """Positions (first, last) of ``FIRST..LAST``, or None when ``text`` is not a range."""
    text = str(text)
    if ".." not in text or ds._label_index().get(text) is not None:
        return None
    a, b = (part.strip() for part in text.split("..", 1))
    i, j = _end(ds, a, text), _end(ds, b, text)
    if j < i:
        raise WorkbenchError(f"range {text!r}: {b!r} comes before {a!r} in {ds.path}")
    return i, j


def _end(ds: Dataset, part: str, text: str) -> int:
    if not part:
        raise WorkbenchError(f"range {text!r}: give both ends, FIRST..LAST")
    found = ds._label_index().get(part)
    if found is not None:
        return found
    if part.isdigit() and 1 <= int(part) <= ds.m:
        return int(part) - 1
    raise WorkbenchError(f"range {text!r}: no subgroup labelled {part!r} in {ds.path}, and it is not a position "
                         f"1..{ds.m:,}")


def signals_in(a: Analysis, first: int, last: int) -> list[str]:
    """Keys of the current signals that fired in positions first..last."""
    return [s.key for s in a.signals if any(first <= p <= last for p in (s.fired or (s.first,)))]


def _span(ds: Dataset, first: int, last: int, labels: list[str], **more) -> dict:
    return {"first": str(ds.labels[first]), "last": str(ds.labels[last]), "count": len(labels),
            "subgroups": labels, **more}


def _text(text: str | None, what: str) -> str:
    if not isinstance(text, str) or not text.strip():
        raise WorkbenchError(f"{what} needs some text")
    return text.strip()


def exclude_range(case: "Case", ds: Dataset, first: int, last: int, reason: str, cause: str | None = None,
                  author: str | None = None) -> Analysis:
    """Exclude every subgroup of first..last not yet excluded (one event; limits before and after once).

    The exclusion answers every signal that fired in the range.
    """
    case._check_writable()
    done = case.state.exclusion_info
    labels = [str(x) for x in ds.labels[first:last + 1] if str(x) not in done]
    if not labels:
        raise WorkbenchError(f"every subgroup of {ds.labels[first]}..{ds.labels[last]} is already excluded")
    before = case.analyse(ds)
    from workbench.core.case.answers import exclusion_answers
    from workbench.core.model import Exclusion
    positions = [first + i for i, x in enumerate(ds.labels[first:last + 1]) if str(x) not in done]
    payload = {"subgroup": labels[0], "stream": None, "reason": _text(reason, "a reason"), "cause": cause,
               "signal": None, "range": _span(ds, first, last, labels, signals=signals_in(before, first, last)),
               "answers": exclusion_answers(before, case.state, Exclusion(labels[0]), positions=positions)}
    return case._record(ds, "exclude", payload, author, before)


def restore_range(case: "Case", ds: Dataset, first: int, last: int, reason: str,
                  author: str | None = None) -> Analysis:
    """Restore every whole-subgroup exclusion in first..last (one event)."""
    case._check_writable()
    done = case.state.exclusion_info
    labels = [str(x) for x in ds.labels[first:last + 1] if str(x) in done]
    if not labels:
        raise WorkbenchError(f"no subgroup of {ds.labels[first]}..{ds.labels[last]} is excluded")
    payload = {"subgroup": labels[0], "stream": None, "reason": _text(reason, "a reason"),
               "range": _span(ds, first, last, labels)}
    return case._record(ds, "restore", payload, author)


def note_range(case: "Case", ds: Dataset, first: int, last: int, text: str, author: str | None = None) -> Event:
    """One note on the subgroups first..last."""
    labels = [str(x) for x in ds.labels[first:last + 1]]
    return case._append("note", {"on": "range", "target": f"{labels[0]}..{labels[-1]}",
                                 "text": _text(text, "a note"), "range": _span(ds, first, last, labels)}, author)


def mark_many(case: "Case", keys: list[str], state: str, note: str | None = None, author: str | None = None,
              span: tuple[Dataset, int, int] | None = None, analysis: Analysis | None = None) -> Event:
    """Mark several signals at once (one event); ``span`` names the range they were chosen by; with the
    ``analysis`` the mark records each signal's firing points (see :mod:`workbench.core.case.answers`)."""
    from workbench.core.case.answers import fired_for
    keys = list(dict.fromkeys(keys))
    if not keys:
        raise WorkbenchError("no signal to mark" + (" in that range" if span else ""))
    payload: dict = {"key": keys[0], "state": state, "note": _text(note, "a note") if note else None}
    if len(keys) > 1 or span is not None:
        payload["keys"] = keys
    fired = fired_for(analysis, case.state, keys)
    if fired is not None:
        payload["fired"] = fired
    if span is not None:
        ds, first, last = span
        payload["range"] = _span(ds, first, last, [str(x) for x in ds.labels[first:last + 1]])
    return case._append("signal", payload, author)


def last_retractable(case: "Case", author: str | None = None) -> Event | None:
    """The latest note, mark, exclusion or restore by ``author`` (the case's author) still in force."""
    who = author or case.author
    for ev in reversed(case.events):
        if ev.kind in RETRACTABLE and ev.author == who and ev.seq not in case.state.retracted:
            return ev
    return None


def retract(case: "Case", ds: Dataset | None, seq: int, reason: str, author: str | None = None) -> Analysis | None:
    """Take back event ``seq``; an exclusion or restore records the limits before and after
    (``ds`` needed then).  Returns the analysis after (None when the limits cannot change)."""
    case._check_writable()
    if not 1 <= seq <= len(case.events):
        raise WorkbenchError(f"no event {seq} in this trail (1..{len(case.events)})")
    target = case.events[seq - 1]
    payload = {"event": seq, "hash": target.hash, "reason": _text(reason, "a reason")}
    if target.kind in ("exclude", "restore"):
        if ds is None:
            raise WorkbenchError("retracting an exclusion needs the data")
        return case._record(ds, "retract", payload, author)
    case._append("retract", payload, author)
    return None


def positions_of(ds: Dataset, labels: list[str]) -> np.ndarray:
    """Positions of labels (unknown labels left out)."""
    index = ds._label_index()
    found = [index.get(str(x)) for x in labels]
    return np.array([f for f in found if f is not None], dtype=np.int64)
