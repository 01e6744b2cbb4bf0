"""The app's user flows: a dialog, then one worker that records the action in the case.

Each flow asks (typed dialogs that end with ``dismiss(result)``), then hands a function of the
:class:`~workbench.tui.session.Session` to ``act``, which runs it in a thread worker; the
worker posts ActionDone / ActionFailed and the handler installs the new snapshot.
"""
from __future__ import annotations

from typing import Callable

from textual import work

from workbench.core.model import Exclusion, Settings, WorkbenchError

from workbench.tui.dialogs.choice import ChoiceDialog
from workbench.tui.dialogs.exclude import ExcludeChoice, ExcludeDialog
from workbench.tui.dialogs.reason import ReasonDialog
from workbench.tui.dialogs.setup import SetupDialog, SetupResult
from workbench.tui.messages import ActionDone, ActionFailed, WatchStopped
from workbench.tui.session import Change, Session
from workbench.tui.view import STATE_WORDS, safe


def _suggestions(row) -> tuple[str, ...]:
    """The row's shape and the cause families often looked at first, for a dialog (never pre-selected)."""
    from workbench.core.charts.shapes import suggestion_lines
    return tuple(suggestion_lines(row.shape, row.role, row.began)) if row.shape else ()


class Flows:
    """Mixed into the App: ``self.snapshot``, ``self.session``, ``self.busy`` live there."""

    # -- running an action ------------------------------------------------------------------

    def act(self, fn: Callable[[Session], Change], doing: str = "saving") -> None:
        if self.busy or self.session is None:
            self.notify("Still saving the previous action; try again in a moment.", severity="warning")
            return
        self.busy = True
        self.show_busy(doing)
        self._act(fn)

    @work(thread=True, group="write", description="write")
    def _act(self, fn: Callable[[Session], Change]) -> None:
        from workbench.tui import follow
        session = self.session
        with session.lock:
            try:
                change = fn(session)
            except Exception as exc:  # one line to the user; the case is unchanged
                self.post_message(ActionFailed(str(exc) or type(exc).__name__))
                return
            stopped = follow.sync(session)
        self.post_message(ActionDone(change))
        if stopped:
            self.post_message(WatchStopped(stopped))

    # -- the flows ----------------------------------------------------------------------------

    def exclude_flow(self, position: int, stream: str | None = None) -> None:
        snap = self.snapshot
        ds = snap.dataset
        label = str(ds.labels[position])
        row = snap.marks.row_at(position)
        key = words = None
        suggestions: tuple[str, ...] = ()
        if row is not None:
            suggestions = _suggestions(snap.marks.rows[row])
        if row is not None and snap.marks.rows[row].state == "open":
            key, words = snap.marks.rows[row].key, snap.marks.rows[row].words
        done = set()
        if snap.analysis.excluded_cells is not None:
            done = {s for j, s in enumerate(ds.streams) if snap.analysis.excluded_cells[position, j]}
        streams = ds.streams if ds.values is not None else ()
        from workbench.core.case.answers import answered_words, exclusion_answers

        def preview(scope: str | None) -> tuple[str, ...]:
            """Every signal the exclusion of the subgroup (None) or of one reading answers, listed before it
            is confirmed (the trail lists the same)."""
            try:
                return tuple(answered_words(exclusion_answers(snap.analysis, snap.state, Exclusion(label, scope),
                                                              key), reading=scope is not None))
            except Exception:  # never block the dialog on the list
                return ()

        def confirmed(choice: ExcludeChoice | None) -> None:
            if choice is not None:
                self.act(lambda s: s.exclude(choice.target, choice.reason, choice.cause, key))

        self.push_screen(ExcludeDialog(label, streams, snap.state.causes, stream, words, frozenset(done),
                                       preview=preview, suggestions=suggestions), confirmed)

    def restore_flow(self, position: int, stream: str | None = None) -> None:
        snap = self.snapshot
        label = str(snap.dataset.labels[position])
        info = snap.state.exclusion_info
        targets = [Exclusion(label)] if label in info else []
        targets += [Exclusion(label, s) for s in snap.dataset.streams if f"{label}:{s}" in info]
        if not targets:
            self.notify("Nothing is excluded in this subgroup.", timeout=3)
            return
        chosen = next((t for t in targets if stream is not None and t.stream == stream), None)
        if chosen is None and len(targets) == 1:
            chosen = targets[0]
        if chosen is not None:
            self._restore_reason(chosen)
            return
        choices = [(str(i), f"reading {safe(t.stream)}" if t.stream else "the whole subgroup")
                   for i, t in enumerate(targets)]
        self.push_screen(ChoiceDialog("Restore which?", f"Several exclusions in subgroup {safe(label)}.", choices),
                         lambda c: self._restore_reason(targets[int(c)]) if c is not None and c.isdigit() else None)

    def _restore_reason(self, target: Exclusion) -> None:
        why = self.snapshot.state.exclusion_info.get(target.key)
        prompt = "Why does it belong in the limits after all?"
        if why is not None:
            prompt += f"\nIt was excluded because: {safe(why.reason)}"
        self.push_screen(ReasonDialog(f"Restore {safe(target.key)}", prompt, "Restore"),
                         lambda r: self.act(lambda s: s.restore(target, r)) if r else None)

    def mark_flow(self, key: str | None, state: str) -> None:
        if key is None:
            self.notify("No signal at the cursor: step to one with n.", timeout=3)
            return
        prompts = {"explained": ("What was the cause? The points stay in the limits.", True),
                   "no-cause-found": ("What was checked? (optional)", False),
                   "open": ("Why reopen it? (optional)", False)}
        prompt, required = prompts[state]
        title = f"Mark {safe(key)} {STATE_WORDS.get(state, state)}"
        suggestions: tuple[str, ...] = ()
        if state == "explained":
            row = next((r for r in self.snapshot.marks.rows if r.key == key), None)
            suggestions = _suggestions(row) if row is not None else ()
        self.push_screen(ReasonDialog(title, prompt, "Mark", required=required, needed="The cause is required",
                                      suggestions=suggestions),
                         lambda r: self.act(lambda s: s.mark(key, state, r)) if r is not None else None)

    # -- a range of subgroups, several signals, retractions

    def range_flow(self, what: str, first: int, last: int) -> None:
        """Exclude, restore, note or mark (explained / no-cause-found / open) every subgroup or signal of
        first..last with one reason: one event in the trail."""
        snap = self.snapshot
        labels = snap.dataset.labels
        span = f"{safe(labels[first])}..{safe(labels[last])} ({last - first + 1:,} subgroups)"
        if what in ("exclude", "restore", "note"):
            title = {"exclude": "Exclude", "restore": "Restore", "note": "Note on"}[what] + f" subgroups {span}"
            prompt = {"exclude": "Why leave them all out of the limits? One reason for the whole range.",
                      "restore": "Why do they belong in the limits after all?", "note": "The note:"}[what]
            run = {"exclude": lambda s, r: s.exclude_range(first, last, r),
                   "restore": lambda s, r: s.restore_range(first, last, r),
                   "note": lambda s, r: s.note_range(first, last, r)}[what]
            self.push_screen(ReasonDialog(title, prompt, title.split()[0]),
                             lambda r: self.act(lambda s: run(s, r)) if r else None)
            return
        keys = [row.key for row in snap.marks.rows[:snap.marks.current]
                if row.state not in ("excluded", what) and first <= row.anchor <= last]
        self.many_flow(keys, what, (first, last), f"in subgroups {span}")

    def many_flow(self, keys: list[str], state: str, span: tuple[int, int] | None, where: str) -> None:
        if not keys:
            self.notify(f"No signal {where} to mark {STATE_WORDS.get(state, state)}.", timeout=3)
            return
        required = state == "explained"
        prompt = "What was the cause? The points stay in the limits." if required else "A note (optional):"
        title = f"Mark {len(keys)} signal{'s' if len(keys) != 1 else ''} {where} {STATE_WORDS.get(state, state)}"
        self.push_screen(ReasonDialog(title, prompt, "Mark", required=required, needed="The cause is required"),
                         lambda r: self.act(lambda s: s.mark_many(keys, state, r, span)) if r is not None else None)

    def retract_flow(self, seq: int | None = None) -> None:
        """Retract event ``seq`` (None: the author's own last note, mark, exclusion or restore)."""
        from workbench.core.case.events import RETRACTABLE
        snap = self.snapshot
        retracted = getattr(snap.state, "retracted", {})
        if seq is None:
            mine = [e for e in snap.events if e.kind in RETRACTABLE and e.author == snap.author
                    and e.seq not in retracted]
            if not mine:
                self.notify("You have no note, mark, exclusion or restore to retract.", timeout=3)
                return
            seq = mine[-1].seq
        ev = snap.events[seq - 1]
        if ev.kind not in RETRACTABLE or seq in retracted:
            why = "was already retracted" if seq in retracted else "is not a note, mark, exclusion or restore"
            self.notify(f"Event {seq} {why}.", timeout=3)
            return
        from workbench.core.case.payload import describe
        self.push_screen(ReasonDialog(f"Retract event {seq}", f"{safe(describe(ev))}\nWhy take it back? It stays in "
                                      "the trail, marked retracted.", "Retract"),
                         lambda r: self.act(lambda s: s.retract(seq, r)) if r else None)

    def note_flow(self, target: str) -> None:
        self.push_screen(ReasonDialog(f"Note on subgroup {safe(target)}", "The note:", "Add note",
                                      needed="A note is required"),
                         lambda r: self.act(lambda s: s.note(r, target, "subgroup")) if r else None)

    def freeze_flow(self) -> None:
        snap = self.snapshot
        if snap.state.frozen is not None:
            self.push_screen(ReasonDialog("Unfreeze the limits", "Why go back to trial (Phase I) limits?", "Unfreeze"),
                             lambda r: self.act(lambda s: s.unfreeze(r)) if r else None)
            return
        still = [r for r in snap.marks.rows[:snap.marks.current] if r.state == "open"]
        if still:  # open signals: say which, and freeze only with a reason (recorded in the trail)
            listed = "\n".join(f"  {safe(r.chart)} {safe(r.rule)} at {r.label}" for r in still[:8])
            more = f"\n  … and {len(still) - 8:,} more" if len(still) > 8 else ""
            prompt = (f"{len(still):,} signal(s) are still open:\n{listed}{more}\nLimits with open signals are not "
                      "shown to be stable. To freeze them anyway, say why (recorded in the trail):")
            self.push_screen(ReasonDialog("Freeze with open signals?", prompt, "Freeze anyway"),
                             lambda r: self.act(lambda s: s.freeze(r)) if r else None)
            return
        msg = (f"Fix the current limits (from {snap.dataset.m:,} subgroups) as Phase I limits? Subgroups "
               "added to the data later are judged against them (Phase II).")
        self.push_screen(ChoiceDialog("Freeze the limits", msg, [("freeze", "Freeze"), ("cancel", "Cancel")]),
                         lambda c: self.act(lambda s: s.freeze()) if c == "freeze" else None)

    def setup_flow(self) -> None:
        snap = self.snapshot

        def applied(result: SetupResult | None) -> None:
            if result is None:
                return
            new_author = result.author != snap.author
            if result.settings == snap.state.settings and not new_author and result.request is None:
                self.notify("The setup did not change.", timeout=3)
                return

            def run(s: Session) -> Change:
                if new_author:
                    s.set_author(result.author)
                if result.request is not None:  # the mapping and any other setup change: one event
                    return s.change_mapping(result.request, result.settings)
                if result.settings != s.case.state.settings:
                    return s.change_settings(result.settings)
                return Change(s.snapshot(), "Author set", (f"actions are now recorded as {safe(result.author)}",))

            self.act(run)

        from workbench.core.report import describe_mapping
        self.push_screen(SetupDialog(snap.state.settings, snap.author, snap.analysis.chart,
                                     safe(describe_mapping(snap.analysis)), self._mapping_choice()), applied)

    def _mapping_choice(self):
        """The file's columns and a check that loads the data under a new mapping (None for a database, or
        when the file cannot be read now)."""
        from workbench.tui.dialogs.setup import MappingChoice
        from workbench.tui.session import read_columns
        session = self.session
        if session is None or session.case.data.source is not None or not session.case.data_status.usable:
            return None
        try:
            columns, _samples = read_columns(session.case.data_status.path)
        except Exception:
            return None

        def check(request) -> str | None:
            try:
                session.check_mapping(request)
            except WorkbenchError as exc:
                return str(exc).splitlines()[0] if str(exc) else type(exc).__name__
            return None

        return MappingChoice(self.snapshot.dataset.layout, columns, check)

    def settings_flow(self, settings: Settings, words: str) -> None:
        """Record a settings change without a dialog (e.g. the fit view's method switch)."""
        self.act(lambda s: s.change_settings(settings), f"setting {words}")
