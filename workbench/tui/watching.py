"""Following the case's data file on the bench (Phase II): a timer, one look at a time in a worker.

Mixed into the App (handlers by name, ``on_watch_looked``: a mixin's ``@on`` is not collected).  ``workbench watch CASE`` starts it on opening; ``w`` on the bench starts and
stops it.  Each look runs in a thread worker (:mod:`workbench.tui.follow`) and posts
:class:`WatchLooked`; the handler installs the new snapshot and tells the user about each new
signal (a notification and the terminal bell).
"""
from __future__ import annotations

from pathlib import Path

from textual import work

from workbench.tui import follow
from workbench.tui.messages import WatchLooked, WatchStopped
from workbench.tui.view import safe


class Watching:
    """Mixed into the App: ``self.session``, ``self.snapshot`` live there."""

    follow_interval: float = 2.0
    """Seconds between looks."""
    follow_bell: bool = True
    """Ring the terminal bell on a new signal."""
    follow_key: str | None = None
    """A database source's key column given on the command line (else the one the case records)."""
    following: str | None = None
    """The file followed (None: not following)."""
    _watch_timer = None
    _looking = False
    _warned_readonly = False

    def follow_label(self) -> str | None:
        """``following <file>`` for the status bar, or None."""
        if not self.following:
            return None
        return f"following {safe(self.following if '://' in self.following else Path(self.following).name)}"

    def toggle_watch(self) -> None:
        if self.following:
            self.stop_watch("Stopped following the data file.")
        elif self._looking:
            self.notify("Still reading the data file; a moment.", timeout=3)
        else:
            self.start_watch()

    def start_watch(self) -> None:
        if self.session is None or self.following or self._looking:
            return
        self._looking = True
        self._watch_start()

    @work(thread=True, exclusive=True, group="watch", description="watch")
    def _watch_start(self) -> None:
        try:
            look = follow.start(self.session, self.follow_key)
        except Exception as exc:  # the reason in one line; nothing is followed
            self.post_message(WatchLooked(None, str(exc) or type(exc).__name__))
            return
        self.post_message(WatchLooked(look))

    def poll_watch(self) -> None:
        """One look at the file now (the timer calls it; a look still running is not doubled)."""
        if self.session is None or not self.following or self._looking:
            return
        self._looking = True
        self._watch_poll()

    @work(thread=True, exclusive=True, group="watch", description="watch")
    def _watch_poll(self) -> None:
        try:
            look = follow.poll(self.session)
        except Exception as exc:  # e.g. an appended row the loader refuses (file:row:column)
            self.post_message(WatchLooked(None, str(exc) or type(exc).__name__))
            return
        self.post_message(WatchLooked(look))

    def stop_watch(self, words: str | None = None, severity: str = "information", title: str = "Watch") -> None:
        if self._watch_timer is not None:
            self._watch_timer.stop()
            self._watch_timer = None
        was = self.following
        self.following = None
        if self.session is not None:
            follow.stop(self.session)
        if words and (was or severity != "information"):
            self.notify(words, title=title, severity=severity, markup=False, timeout=12)
        self._watch_changed()

    def _watch_changed(self) -> None:
        bench = self.bench()
        if bench is not None:
            bench.update_status()
        self.screen.refresh_bindings()

    def on_watch_looked(self, msg: WatchLooked) -> None:
        self._looking = False
        if msg.error is not None:
            self.stop_watch(f"Not following the data file: {msg.error}", severity="error")
            return
        look = msg.look
        j = look.judgement
        if look.started:
            self.following = look.path
            self._watch_timer = self.set_interval(self.follow_interval, self.poll_watch, name="watch")
            self.notify(f"Following {safe(look.path)}{safe(look.by)}: new subgroups are judged against the frozen "
                        f"limits. {safe(j.message)}. Press w to stop.", title="Watch", markup=False, timeout=8)
        if look.snapshot is not None:
            self._show_look(look)  # also when stopped while the look ran: it was recorded as seen
        if not self.following:
            return
        if j.positions and not look.recorded and self.snapshot.readonly and not self._warned_readonly:
            self._warned_readonly = True
            self.notify(f"The case is read-only ({safe(self.snapshot.readonly_reason)}): what is judged is not "
                        "recorded in its trail.", severity="warning", markup=False, timeout=10)
        if not j.ok:
            self.stop_watch(f"{safe(j.message)}. Reopen the case to see the file as it is now.", severity="error",
                            title="Watch stopped")
            return
        self._watch_changed()
        if j.update is not None and j.update.more:
            self.call_later(self.poll_watch)

    def _show_look(self, look) -> None:
        j, bench = look.judgement, self.bench()
        at_end = bench is not None and self.snapshot is not None and bench.cursor >= self.snapshot.dataset.m - 1
        self.install_snapshot(look.snapshot)
        if bench is not None and at_end and j.positions:
            bench.move_to(look.snapshot.dataset.m - 1)  # the cursor at the end follows the new data
        if not j.signals:
            return
        for line in follow.signal_words(look):
            self.notify(line, title="New signal", severity="warning", markup=False, timeout=15)
        if self.follow_bell:
            self.bell()

    def on_watch_stopped(self, msg: WatchStopped) -> None:
        self.stop_watch(f"Stopped following the data file: {msg.reason}", severity="warning")
