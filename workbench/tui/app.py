"""The terminal workbench: opening a case in a worker, owning the snapshot, routing it to screens."""
from __future__ import annotations

import argparse
import sys
from dataclasses import replace
from pathlib import Path

from textual import on, work
from textual.app import App
from textual.binding import Binding

from workbench.core.data.characteristics import ManyCharacteristics
from workbench.core.model import WorkbenchError

from workbench.tui.commands import WorkbenchCommands
from workbench.tui.keys import APP_BINDINGS
from workbench.tui.dialogs.choice import ChoiceDialog
from workbench.tui.dialogs.mapping import MappingDialog
from workbench.tui.flows import Flows
from workbench.tui.messages import (ActionDone, ActionFailed, LockTaken, OpenFailed, OpenNeedsCharacteristic,
                                    OpenNeedsChoice, OpenNeedsMapping, OpenProgress, SessionReady)
from workbench.tui.watching import Watching
from workbench.tui.screens.bench import BenchScreen
from workbench.tui.screens.loading import LoadingScreen
from workbench.tui.session import CaseExists, NeedMapping, OpenRequest, Session, Snapshot, open_session
from workbench.tui.view import safe


NOTICE_SECONDS = 3.5
"""How long a notice stays (the next key press dismisses it sooner)."""


class WorkbenchApp(Watching, Flows, App[int]):
    """One case on the bench."""

    CSS_PATH = "app.tcss"
    TITLE = "workbench"
    COMMANDS = App.COMMANDS | {WorkbenchCommands}
    BINDINGS = list(APP_BINDINGS)

    def __init__(self, request: OpenRequest, hide_times: bool = False, quiet_reuse: bool = False,
                 watch: bool = False, watch_interval: float = 2.0, bell: bool = True,
                 watch_key: str | None = None) -> None:
        super().__init__()
        self.watch_on_open = watch
        self.follow_key = watch_key
        """A database source's increasing key column (``workbench watch CASE --key COLUMN``)."""
        """Follow the case's data file as soon as it is open (``workbench watch CASE``)."""
        self.follow_interval, self.follow_bell = float(watch_interval), bool(bell)
        self.request = request
        self.hide_times = hide_times
        """Test hook: no times or hashes on screen (for snapshots)."""
        self.quiet_reuse = quiet_reuse
        self.session: Session | None = None
        self.snapshot: Snapshot | None = None
        self.busy = False
        self.error: str | None = None

    # -- opening ------------------------------------------------------------------------------

    def check_size(self) -> None:
        """Below 80×24 one screen asks for a larger terminal; it goes once the terminal is large enough."""
        from workbench.tui.screens.too_small import TooSmallScreen, too_small
        width, height = self.size.width, self.size.height
        small = too_small(width, height)
        if small and not isinstance(self.screen, TooSmallScreen):
            self.push_screen(TooSmallScreen())
        elif small:
            self.screen.show_size(width, height)
        elif isinstance(self.screen, TooSmallScreen):
            self.pop_screen()

    def on_mount(self) -> None:
        self.push_screen(LoadingScreen(self.request.path.name))
        self._open(self.request)

    @work(thread=True, exclusive=True, group="open", description="open")
    def _open(self, req: OpenRequest) -> None:
        progress = lambda what, f: self.post_message(OpenProgress(what, f))  # noqa: E731
        try:
            session = open_session(req, progress)
        except CaseExists as exc:
            self.post_message(OpenNeedsChoice(exc.case_path, exc.summary))
        except NeedMapping as exc:
            self.post_message(OpenNeedsMapping(exc))
        except ManyCharacteristics:
            from workbench.core.overview import overview
            try:
                src = req.source if req.source is not None else str(req.path)
                rows = overview(src, req.request, req.settings, req.specs)
            except (WorkbenchError, OSError) as exc:
                self.post_message(OpenFailed(str(exc)))
            else:
                self.post_message(OpenNeedsCharacteristic(getattr(src, "shown", str(req.path.name)), rows))
        except (WorkbenchError, OSError) as exc:
            self.post_message(OpenFailed(str(exc)))
        except Exception as exc:  # a fault, not bad input: still one line, never a dead screen
            self.post_message(OpenFailed(f"cannot open {req.path}: {type(exc).__name__}: {exc}"))
        else:
            progress("drawing the charts", 1.0)
            self.post_message(SessionReady(session, session.snapshot()))

    @on(OpenProgress)
    def open_progress(self, msg: OpenProgress) -> None:
        if isinstance(self.screen, LoadingScreen):
            self.screen.progress(msg.what, msg.fraction)

    @on(OpenNeedsChoice)
    def open_choice(self, msg: OpenNeedsChoice) -> None:
        if self.quiet_reuse:
            self._reopen(replace(self.request, reuse="reuse"))
            return
        text = (f"A case for {safe(self.request.path.name)} already exists: {safe(msg.case_path)} "
                f"({safe(msg.summary)}).\nOpen it to go on with that investigation, or start a new case beside it.")
        choices = [("reuse", "Open the existing case"), ("new", "Start a new case"), ("quit", "Quit")]

        def chosen(c: str | None) -> None:
            if c in ("reuse", "new"):
                self._reopen(replace(self.request, reuse=c))
            else:
                self.exit(0)

        self.push_screen(ChoiceDialog("A case already exists", text, choices), chosen)

    @on(OpenNeedsMapping)
    def open_mapping(self, msg: OpenNeedsMapping) -> None:
        err: NeedMapping = msg.error

        def mapped(request) -> None:
            if request is None:
                self.exit(0)
            else:
                self._reopen(replace(self.request, request=request, mapped=True))

        self.push_screen(MappingDialog(str(err), err.path.name, err.columns, err.samples, self.request.request), mapped)

    @on(OpenNeedsCharacteristic)
    def open_overview(self, msg: OpenNeedsCharacteristic) -> None:
        from workbench.tui.screens.overview import OverviewScreen

        def chosen(name: str | None) -> None:
            if name is None:
                self.exit(0)
            else:  # the loading screen is under the overview; the bench replaces it when the case is open
                self._reopen(replace(self.request, request=replace(self.request.request, characteristic=name)))

        self.push_screen(OverviewScreen(msg.source, msg.rows), chosen)

    def _reopen(self, req: OpenRequest) -> None:
        self.request = req
        self._open(req)

    @on(OpenFailed)
    def open_failed(self, msg: OpenFailed) -> None:
        self.error = msg.message
        self.exit(2)

    @on(SessionReady)
    def session_ready(self, msg: SessionReady) -> None:
        self.session, self.snapshot = msg.session, msg.snapshot
        from workbench.tui.viewstate import read_view
        self.saved_view = read_view(msg.session.case.path)
        self.switch_screen(BenchScreen())
        for notice in msg.session.notices:
            self.notify(safe(notice), markup=False, timeout=NOTICE_SECONDS)
        if self.request.settings_given and not msg.session.created:
            self.notify("The setup options on the command line apply to new cases; this case keeps its own "
                        "setup (press s to change it).", markup=False, timeout=NOTICE_SECONDS)
        if msg.snapshot.readonly:
            self.notify(f"read-only: {safe(msg.snapshot.readonly_reason)}", markup=False, severity="warning",
                        timeout=NOTICE_SECONDS)
            if msg.session.case.holder is not None:  # another session writes: try again until it lets go
                self._lock_timer = self.set_interval(self.LOCK_RETRY_SECONDS, self.retry_lock, name="lock-retry")
        if self.watch_on_open:
            self.start_watch()

    # -- waiting for another writer ---------------------------------------------------------

    LOCK_RETRY_SECONDS = 3.0
    """How often a read-only view of a case another session holds tries to take it over."""
    _lock_timer = None

    def retry_lock(self) -> None:
        """Try (in a worker) to become the case's writer; the holder was named when it opened."""
        if self.session is not None and self.snapshot is not None and self.snapshot.readonly and not self.busy:
            self._take_lock()

    @work(thread=True, exclusive=True, group="lock", description="lock")
    def _take_lock(self) -> None:
        try:
            taken = self.session.take_lock()
        except WorkbenchError:
            return
        if taken:
            self.post_message(LockTaken(self.session.snapshot()))

    @on(LockTaken)
    def lock_taken(self, msg: LockTaken) -> None:
        if self._lock_timer is not None:
            self._lock_timer.stop()
            self._lock_timer = None
        self.install_snapshot(msg.snapshot)
        self.notify("The other session closed the case: it is yours to change now.", markup=False, timeout=8)

    # -- actions recorded -------------------------------------------------------------------

    async def on_event(self, event) -> None:
        """A key press dismisses the notices on screen (before the key acts, so its own notices stay)."""
        from textual import events
        if isinstance(event, events.Key) and not event.is_forwarded and len(self._notifications):
            self.clear_notifications()
        await super().on_event(event)

    @on(ActionDone)
    def recorded(self, msg: ActionDone) -> None:
        self.busy = False
        self.install_snapshot(msg.change.snapshot)
        self.notify("\n".join(msg.change.lines) or " ", title=msg.change.title, markup=False, timeout=NOTICE_SECONDS)

    @on(ActionFailed)
    def not_recorded(self, msg: ActionFailed) -> None:
        self.busy = False
        self.show_busy("")
        self.notify(msg.message, title="Not recorded", severity="error", markup=False, timeout=NOTICE_SECONDS)

    def install_snapshot(self, snap: Snapshot) -> None:
        """Make ``snap`` the current state and show it on every screen of the stack."""
        self.snapshot = snap
        for screen in self.screen_stack:
            show = getattr(screen, "show_snapshot", None)
            if show is not None:
                show(snap)
            screen.refresh_bindings()

    def show_busy(self, doing: str) -> None:
        bench = self.bench()
        if bench is not None:
            bench.update_status(doing if self.busy else "")
        self.screen.refresh_bindings()

    def bench(self) -> BenchScreen | None:
        return next((s for s in self.screen_stack if isinstance(s, BenchScreen)), None)

    # -- app-wide actions -----------------------------------------------------------------------

    def action_help(self) -> None:
        from workbench.tui.screens.help import HelpScreen
        if not isinstance(self.screen, HelpScreen):
            self.push_screen(HelpScreen())

    async def action_quit(self) -> None:
        self.exit(0)

    saved_view = None
    """Where the bench was looking when this case was last closed (the sidecar beside the case), or None."""

    def save_view(self) -> None:
        """Keep the bench's cursor, zoom window and selected signal beside the case (never in the trail)."""
        bench = self.bench()
        if self.session is None or bench is None:
            return
        view = bench.current_view()
        if view is not None:
            from workbench.tui.viewstate import write_view
            write_view(self.session.case.path, view)

    def exit(self, result=None, return_code: int = 0, message=None) -> None:
        try:
            self.save_view()
        except Exception:  # a view is never worth an error at quit
            pass
        self.close_session()
        super().exit(result, return_code, message)

    def close_session(self) -> None:
        """Release the case's lock (every action is already written)."""
        if self._watch_timer is not None:
            self._watch_timer.stop()
            self._watch_timer = None
        if self.session is not None:
            self.session.close()


def request_from_args(args: argparse.Namespace) -> OpenRequest:
    """What ``workbench [open] ...`` asks to open (no path: the bundled demo)."""
    from workbench.options import layout_request_from_args, settings_from_args
    from workbench.demo import demo_path, demo_settings_for
    from workbench.options import data_source
    source = data_source(args.path, args) if getattr(args, "path", None) else None
    if source is not None and not isinstance(source, str):  # a database table or query
        settings = settings_from_args(args)
        case = getattr(args, "case", None)
        return OpenRequest(path=Path(source.stem), request=layout_request_from_args(args), settings=settings,
                           author=getattr(args, "author", None), case_path=Path(case) if case else None,
                           settings_given=settings != type(settings)(), source=source, specs=_specs(args))
    path = Path(args.path) if getattr(args, "path", None) else demo_path()
    if not path.exists():
        raise WorkbenchError(f"no such file: {path}")
    if path.is_dir():
        raise WorkbenchError(f"{path} is a directory, not a data or case file")
    base = demo_settings_for(path)
    settings = settings_from_args(args, base)
    case = getattr(args, "case", None)
    return OpenRequest(path=path, request=layout_request_from_args(args), settings=settings,
                       author=getattr(args, "author", None), case_path=Path(case) if case else None,
                       reuse="reuse" if not getattr(args, "path", None) else "ask",
                       settings_given=settings != (base or type(settings)()), specs=_specs(args))


def _specs(args: argparse.Namespace) -> dict | None:
    from workbench.core.data.characteristics import read_specs
    return read_specs(args.specs) if getattr(args, "specs", None) else None


def run_app(args: argparse.Namespace) -> int:
    """Run the workbench full screen; returns the exit status (2 when the file cannot be opened)."""
    app = WorkbenchApp(request_from_args(args), watch=bool(getattr(args, "watch", False)),
                       watch_interval=getattr(args, "watch_interval", None) or 2.0,
                       bell=getattr(args, "bell", True), watch_key=getattr(args, "watch_key", None))
    try:
        app.run()
    finally:
        app.close_session()
    if app.error:
        print(f"workbench: error: {app.error}", file=sys.stderr)
        return 2
    return int(app.return_code or 0)
