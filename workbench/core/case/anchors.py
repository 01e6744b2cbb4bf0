"""Anchors against rollback and truncation, and the checks a writer makes before it writes.

A hash chain proves that the events it holds were not changed one by one; it cannot prove that
none were cut off the end, nor that an older copy was not put back.  Two anchors can:

* a head hash kept elsewhere (quoted in a review, a ticket, a mail): ``verify --expect-head``
  finds that event in the trail and says how many events follow it;
* the ``.bak`` beside the case file (the version before the last write): when it holds the same
  chain *further* than the case file, the file was rolled back or truncated.

:func:`file_findings` lists what makes a file unfit to be written on (a broken chain, text that
is not as workbench writes it, a ``.bak`` that extends or departs from the trail), so a write never
re-renders an edited file into something that verifies (no laundering).
"""
from __future__ import annotations

import os
import re
import stat
from pathlib import Path

from workbench.core.case.events import Event
from workbench.core.case.format import Document, chain_break, read_json, render
from workbench.core.model import WorkbenchError

_HEX = re.compile(r"[0-9a-f]{12,64}")
MIN_ANCHOR = 12
"""Hex digits of a head hash enough to name it (48 bits: a chance collision is out of reach)."""


def backup_path(path: Path) -> Path:
    """``x.case.json`` -> ``x.case.json.bak`` (the previous version)."""
    return Path(path).with_name(Path(path).name + ".bak")


def bak_finding(path: Path, events: tuple[Event, ...]) -> tuple[str, str] | None:
    """(kind, words) when the ``.bak`` extends the file's chain (``rollback``) or departs from it
    (``departs``); None when it is absent, unreadable as a case, or a prefix of the file."""
    bak = backup_path(path)
    try:
        if stat.S_ISLNK(os.lstat(bak).st_mode):
            return "departs", f"the previous version {bak} is a symbolic link, not a version workbench wrote"
        top = read_json(bak.read_bytes(), str(bak))
    except (OSError, WorkbenchError):
        return None
    theirs = [ev.get("hash") if isinstance(ev, dict) else None for ev in top["trail"]]
    mine = [ev.hash for ev in events]
    differ = next((i for i, (a, b) in enumerate(zip(mine, theirs)) if a != b), None)
    if differ is not None:
        return "departs", (f"the previous version {bak} departs from the case file at event {differ + 1}: one of "
                           "them was rewritten (compare them)")
    if len(theirs) > len(mine):
        broken = chain_break(top)
        if broken is None or broken[0] > len(mine):
            return "rollback", (f"possible rollback: the previous version {bak} holds {len(theirs)} events, "
                                f"{len(theirs) - len(mine)} more than the case file, on the same chain (its head "
                                f"{str(theirs[-1])[:16]}…); the case file may have been rolled back or truncated")
    return None


def check_anchor(events: tuple[Event, ...], broken: tuple[int, str] | None, expect: str) -> tuple[bool, str]:
    """(found on the chain, words) for ``verify --expect-head``."""
    prefix = expect.strip().lower()
    if not _HEX.fullmatch(prefix):
        raise WorkbenchError(f"--expect-head {expect!r}: give at least {MIN_ANCHOR} hex digits of an event hash")
    matches = [ev for ev in events if ev.hash.startswith(prefix)]
    if len(matches) > 1:
        raise WorkbenchError(f"--expect-head {prefix}: names {len(matches)} events; give more digits")
    if not matches:
        return False, (f"the expected head {prefix} is not in the trail ({len(events)} events): the case was rolled "
                       "back, truncated or rewritten before that point")
    ev = matches[0]
    if broken is not None and broken[0] <= ev.seq:
        return False, f"the expected head {prefix} is event {ev.seq}, but the chain breaks before it at event {broken[0]}"
    after = len(events) - ev.seq
    return True, (f"the expected head {prefix} is event {ev.seq}, still on the chain; {after} event"
                  f"{'' if after == 1 else 's'} follow{'s' if after == 1 else ''} it")


def edited_text(raw: bytes, doc: Document) -> str | None:
    """Where the file's text differs from what workbench writes for the same values, or None.

    The hashes cover values; this catches edits that keep the values (a number spelled
    differently, reformatting, a duplicate key), so that changing any character is noticed.
    """
    expected = render(doc.data_dict, doc.events)
    if raw == expected:
        return None
    have, want = raw.split(b"\n"), expected.split(b"\n")
    line = next((i for i, (a, b) in enumerate(zip(have, want)) if a != b), min(len(have), len(want)))
    where = ("the data reference" if line == 3 else f"event {line - 4}" if 5 <= line < 5 + len(doc.events)
             else "the file's framing")
    return (f"{where} is not stored the way workbench writes it (line {line + 1}): its text was edited, "
            "although its values still match their hashes")


def file_findings(path: Path, raw: bytes, doc: Document) -> list[str]:
    """What makes the file unfit to write on, first problem first (empty: fit)."""
    found = []
    if doc.chain_break:
        n, why = doc.chain_break
        found.append(f"the chain breaks at event {n}: {why}")
    text = edited_text(raw, doc)
    if text:
        found.append(text)
    bak = bak_finding(path, doc.events)
    if bak:
        found.append(bak[1])
    return found


def repair_remarks(events: tuple[Event, ...]) -> list[str]:
    """One line per ``repair`` event, so a repaired break is never silent."""
    from workbench.core.text import printable
    return [f"event {ev.seq}: repaired by {printable(ev.author)}: {printable(ev.payload['reason'])} (found: "
            + "; ".join(printable(x) for x in ev.payload["found"]) + ")" for ev in events if ev.kind == "repair"]
