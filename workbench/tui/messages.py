"""Messages that workers post; handlers (on the UI thread) own all state they carry."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from textual.message import Message


@dataclass
class OpenProgress(Message):
    """The opening worker reached a stage."""

    what: str
    fraction: float


@dataclass
class OpenNeedsChoice(Message):
    """A case for the data already exists: reuse it or start a new one."""

    case_path: Any
    summary: str


@dataclass
class OpenNeedsMapping(Message):
    """The layout of the data file was not detected: ask for a column mapping."""

    error: Any
    """The NeedMapping error (message, path, columns, samples)."""


@dataclass
class OpenNeedsCharacteristic(Message):
    """The data hold several characteristics and none was chosen: show the overview."""

    source: str
    rows: Any
    """core.overview rows, sorted by what needs attention first."""


@dataclass
class OpenFailed(Message):
    message: str


@dataclass
class SessionReady(Message):
    session: Any
    snapshot: Any


@dataclass
class LockTaken(Message):
    """The session that held the case closed it: this one now writes (``snapshot``: reloaded state)."""

    snapshot: Any


@dataclass
class ActionDone(Message):
    """An action was recorded in the trail; ``change`` holds the new snapshot and a summary."""

    change: Any


@dataclass
class ActionFailed(Message):
    message: str


@dataclass
class ChartsReady(Message):
    """The bench's charts were built for a window (``token`` identifies the request)."""

    token: int
    pictures: tuple
    error: str | None = None
    """Why the window could not be drawn (then ``pictures`` is empty)."""

    def can_replace(self, message: Message) -> bool:
        return isinstance(message, ChartsReady)


@dataclass
class Computed(Message):
    """A view's background computation finished (``what`` names it, ``token`` the request)."""

    what: str
    token: int
    result: Any
    error: str | None = None


@dataclass
class WatchLooked(Message):
    """A look at the followed data file finished (``look`` is a follow.Look, None on ``error``)."""

    look: Any
    error: str | None = None


@dataclass
class WatchStopped(Message):
    """Following the data file stopped (the limits were unfrozen, the file was rewritten, ...)."""

    reason: str
