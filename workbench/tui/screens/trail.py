"""The trail view: every event with time, author, action and details, and the integrity status."""
from __future__ import annotations

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import DataTable, Static

from workbench.core.case.events import describe

from workbench.tui.messages import Computed
from workbench.tui.session import Snapshot
from workbench.tui.view import limits_change, limits_line, safe
from workbench.tui.widgets.keybar import KeyBar


def setup_changes(events) -> dict[int, list[str]]:
    """Event number -> ``name: old -> new`` for each settings event (against the setup before it)."""
    from workbench.core.case.events import settings_changes
    from workbench.core.model import Settings
    out, current = {}, None
    for ev in events:
        new = ev.payload.get("settings") if ev.kind in ("created", "settings") else None
        if new is None:
            continue
        settings = Settings.from_dict(new)
        if current is not None:
            out[ev.seq] = [safe(c) for c in settings_changes(current, settings)]
        current = settings
    return out


class TrailScreen(Screen):
    """The append-only log of the case, newest last."""

    BINDINGS = [
        Binding("escape", "back", "Back", id="trail-back"),
        Binding("v", "verify", "Check integrity", id="trail-verify"),
        Binding("R", "retract", "Retract this event", id="trail-retract"),
    ]

    def __init__(self) -> None:
        super().__init__(id="trail")
        self.snap: Snapshot | None = None
        self.changes: dict[int, list[str]] = {}

    def compose(self) -> ComposeResult:
        yield Static(id="trail-integrity", markup=False)
        yield DataTable(id="trail-table", cursor_type="row", zebra_stripes=True)
        yield Static(id="trail-detail", markup=False)
        yield KeyBar()

    def on_mount(self) -> None:
        table = self.query_one(DataTable)
        for c in ("#", "time", "author", "action", "details"):
            table.add_column(c, key=c)
        if self.app.snapshot is not None:
            self.show_snapshot(self.app.snapshot)
        table.focus()

    def show_snapshot(self, snap: Snapshot) -> None:
        self.snap = snap
        table = self.query_one(DataTable)
        table.clear()
        hide = self.app.hide_times
        self.changes = setup_changes(snap.events)
        retracted = getattr(snap.state, "retracted", {})
        for ev in snap.events:
            words = describe(ev)
            if ev.seq in retracted:
                words = Text(f"[retracted by event {retracted[ev.seq]}] {words}", style="strike dim")
            if ev.seq in self.changes:
                words += ": " + "; ".join(self.changes[ev.seq])
            table.add_row(str(ev.seq), "—" if hide else ev.time, Text(safe(ev.author)), ev.kind,
                          words if isinstance(words, Text) else Text(words), key=str(ev.seq))
        if snap.events:
            table.move_cursor(row=len(snap.events) - 1)
        self.action_verify()

    @on(DataTable.RowHighlighted)
    def highlighted(self, msg: DataTable.RowHighlighted) -> None:
        if self.snap is None or msg.cursor_row < 0 or msg.cursor_row >= len(self.snap.events):
            return
        ev = self.snap.events[msg.cursor_row]
        t = Text()
        t.append(f"event {ev.seq} · {ev.kind} · {safe(ev.author)}\n", style="bold")
        t.append(describe(ev) + "\n")
        for change in self.changes.get(ev.seq, ()):
            t.append(f"  {change}\n")
        if ev.limits_before is not None and ev.limits_after is not None:
            t.append("limits before → after\n", style="underline")
            for line in limits_change(ev.limits_before, ev.limits_after):
                t.append(f"  {line}\n")
        elif ev.limits_after is not None:
            t.append("limits recorded at this event\n", style="underline")
            for name, lim in ev.limits_after.get("charts", {}).items():
                t.append(f"  {limits_line(name, lim)}\n")
        self.query_one("#trail-detail", Static).update(t)

    def action_verify(self) -> None:
        self.query_one("#trail-integrity", Static).update(Text("integrity: checking…", style="italic"))
        self._verify()

    @work(thread=True, exclusive=True, group="verify", description="verify")
    def _verify(self) -> None:
        try:
            result = self.app.session.verify()
        except Exception as exc:  # shown as the status
            self.post_message(Computed("verify", 0, None, str(exc)))
            return
        self.post_message(Computed("verify", 0, result))

    @on(Computed)
    def verified(self, msg: Computed) -> None:
        t = Text()
        t.append("integrity: ", style="bold")
        if msg.error:
            t.append(f"cannot check: {safe(msg.error)}", style="bold")
        else:
            v = msg.result
            if v.intact:
                head = "…" if self.app.hide_times else (v.head_hash or "")[:16]
                events = f"{v.events} event{'' if v.events == 1 else 's'}"
                t.append(f"intact — {events}, hash chain whole, head {head}", style="bold")
            else:
                t.append(f"NOT intact — {safe(v.problems[0])}", style="bold reverse")
                for p in v.problems[1:]:
                    t.append(f"\n  also: {safe(p)}")
            for r in v.remarks:
                t.append(f"\n  note: {safe(r)}", style="dim")
        self.query_one("#trail-integrity", Static).update(t)

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        if action == "retract":
            snap = self.snap
            if snap is None or snap.readonly or self.app.busy:
                return None
        return True

    def action_retract(self) -> None:
        """Retract the highlighted note, mark, exclusion or restore (a new event; the original stays)."""
        row = self.query_one(DataTable).cursor_row
        if self.snap is not None and 0 <= row < len(self.snap.events):
            self.app.retract_flow(self.snap.events[row].seq)

    def action_back(self) -> None:
        self.app.pop_screen()
