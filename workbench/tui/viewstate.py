"""Where the bench was looking: cursor, zoom window and selected signal, kept beside the case.

Looking is not recording: the view is never part of the trail. It lives in a small sidecar file
``<case>.view`` next to the case file (``casefiles/filler_line3.case.json.view``), written when the
workbench quits, by the same atomic writer as every other file. It is outside the hash chain, so it
never affects ``workbench verify`` or the trail's hashes; a missing, unreadable or stale sidecar (a label
no longer in the data) just opens the default view. Subgroups are named by label, so the view survives
rows appended to the data file.
"""
from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

FORMAT = "workbench.view"
VERSION = 1


@dataclass(frozen=True)
class SavedView:
    """The bench's view of one case."""

    cursor: str
    """Label of the subgroup under the cursor."""
    window: tuple[str, str] | None
    """Labels of the first and last subgroup shown, or None for the automatic window."""
    signal: str | None
    """Key of the selected signal in the signals list, or None."""

    def as_dict(self) -> dict:
        return {"format": FORMAT, "version": VERSION, "cursor": self.cursor,
                "window": list(self.window) if self.window else None, "signal": self.signal}


def view_path(case_path: str | Path) -> Path:
    """The sidecar of a case file."""
    p = Path(case_path)
    return p.with_name(p.name + ".view")


def read_view(case_path: str | Path) -> SavedView | None:
    """The saved view, or None when there is none or it cannot be read (never an error: it is only a view)."""
    try:
        d = json.loads(view_path(case_path).read_text(encoding="utf-8"))
    except (OSError, ValueError, UnicodeDecodeError):
        return None
    if not isinstance(d, dict) or d.get("format") != FORMAT or d.get("version") != VERSION:
        return None
    cursor, window, signal = d.get("cursor"), d.get("window"), d.get("signal")
    if not isinstance(cursor, str):
        return None
    if window is not None and not (isinstance(window, list) and len(window) == 2
                                   and all(isinstance(w, str) for w in window)):
        return None
    if signal is not None and not isinstance(signal, str):
        return None
    return SavedView(cursor, tuple(window) if window else None, signal)


def write_view(case_path: str | Path, view: SavedView) -> None:
    """Write the sidecar atomically; a folder that cannot be written leaves the view unsaved, silently."""
    from workbench.core.case.disk import atomic_write
    try:
        atomic_write(view_path(case_path), (json.dumps(view.as_dict(), ensure_ascii=False, indent=1) + "\n")
                     .encode("utf-8"))
    except Exception:  # a view is never worth an error at quit (a read-only folder, a full disk)
        pass
