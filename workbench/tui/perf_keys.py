"""Keypress latency of the bench on a long series, against an empty Textual app (a benchmark, not a test).

``measure_keypress`` runs the workbench headless (``App.run_test``) on a generated dataset of
``subgroups`` subgroups, presses → (next subgroup) ``presses`` times and times each press until
the repaint has settled: the key is handled, any worker it started has finished and the screen
has been composited.  The same round trip is timed on an empty app whose key handler updates
one label.  Both apps run at once and are pressed alternately, so a busy machine slows both
alike.  The figures are medians in milliseconds; the ratio is what the goal is stated in.

The clock does not include ``Pilot.press``'s idle-waiting sleeps (tens of milliseconds that
would hide the work of both apps alike): keys are posted to the app as the driver does and the
wait ends when every message queue is empty, no worker runs and the screen is composited.
"""
from __future__ import annotations

import asyncio
import statistics
import tempfile
import time
from pathlib import Path

import numpy as np
from textual.worker import WorkerCancelled


def generated_dataset(subgroups: int, streams: int = 5, seed: int = 7):
    """In-control normal readings (500 ± 0.5) with a few planted shifts, as an in-memory Dataset."""
    from workbench.core.model import Dataset, Layout
    rng = np.random.default_rng(seed)
    values = np.round(rng.normal(500.0, 0.5, (subgroups, streams)), 2)
    for start in rng.integers(0, max(subgroups - 20, 1), size=max(1, subgroups // 20_000)):
        values[start:start + 12] += 0.9
    labels = np.array([f"S{i + 1}" for i in range(subgroups)])
    return Dataset(path="generated.csv", sha256="0" * 64, rows=subgroups, size_bytes=0,
                   layout=Layout("wide", streams=tuple(f"H{j + 1}" for j in range(streams))), labels=labels,
                   streams=tuple(f"H{j + 1}" for j in range(streams)), values=values)


async def _settle(pilot) -> None:
    """Wait until every message queue is empty and no worker runs, then composite the screen.

    Only nodes with pending messages are waited on (``Pilot.press`` instead pings every widget
    and sleeps until the CPU is idle), so the clock sees the work the key causes, not the harness.
    """
    app = pilot.app
    for _ in range(1000):
        for worker in [w for w in app.workers if w.is_running]:
            try:
                await worker.wait()
            except WorkerCancelled:  # replaced by a newer request
                pass
        nodes = [n for n in (app, *app.screen.walk_children(with_self=True)) if not n._message_queue.empty()]
        if nodes:
            done = [asyncio.Event() for _ in nodes]
            for node, event in zip(nodes, done):
                node.call_later(event.set)
            for event in done:
                await event.wait()
            continue
        screen = app.screen
        if screen._dirty_widgets or screen._repaint_required or screen._layout_required:
            screen._on_timer_update()  # composite now (it may queue after-refresh callbacks)
            continue
        if not any(w.is_running for w in app.workers):
            break


async def _press(pilot, key: str) -> None:
    from textual import events
    from textual._context import active_app
    active_app.set(pilot.app)  # two apps share this task: name the one being pressed
    event = events.Key(key, None)
    event.set_sender(pilot.app)
    await pilot.app._post_message(event)  # what the driver does, without its thread hop
    await _settle(pilot)


async def _time_presses(app, empty, size: tuple[int, int], presses: int, key: str, ready) -> tuple[list, list]:
    """Press ``key`` in both apps, alternately, so both see the same machine load."""
    app_times, empty_times = [], []
    async with app.run_test(size=size) as pilot:
        for _ in range(600):
            await pilot.pause()
            if ready(app):
                break
            await asyncio.sleep(0.05)
        else:
            raise RuntimeError("the workbench did not open its bench")
        async with empty.run_test(size=size) as other:
            await other.pause()  # started and composed (not timed)
            await pilot.pause()
            await _press(pilot, "home")  # a long series opens on its newest part: step from the first subgroup
            for _ in range(3):  # warm-up
                await _press(pilot, key)
                await _press(other, key)
            start = app.screen.cursor
            for _ in range(presses):
                for p, times in ((pilot, app_times), (other, empty_times)):
                    t = time.perf_counter()
                    await _press(p, key)
                    times.append((time.perf_counter() - t) * 1000.0)
                    if p.app.screen._dirty_widgets:
                        raise RuntimeError("the screen was not repainted when the clock stopped")
            if app.screen.cursor != start + presses or other.app.count != presses + 3:
                raise RuntimeError("not every key press was handled while timing")
        app.close_session()
    return app_times, empty_times


def _empty_app():
    from textual.app import App
    from textual.widgets import Static

    class Empty(App):
        BINDINGS = [("right", "step", "Step")]

        def compose(self):
            yield Static("0", id="n")

        count = 0

        def action_step(self) -> None:
            self.count += 1
            self.query_one("#n", Static).update(str(self.count))

    return Empty()


def ready(app) -> bool:
    """The bench is on screen with its snapshot and a drawn location chart: the user can work."""
    from workbench.tui.screens.bench import BenchScreen
    s = app.screen
    return isinstance(s, BenchScreen) and s.snap is not None and s.query_one("#location").picture is not None


def open_until_ready(path: str, report: str, size: tuple[int, int] = (120, 36)) -> None:
    """Open a data file in the workbench (headless) and return as soon as the bench is usable.

    Run in a fresh process by ``workbench perf``, which times the whole process; writes to
    ``report`` the progress-bar steps (percent) posted to the opening screen, comma separated.
    """
    from workbench.tui.app import WorkbenchApp
    from workbench.tui.messages import OpenProgress
    from workbench.tui.session import OpenRequest

    with tempfile.TemporaryDirectory() as tmp:
        app = WorkbenchApp(OpenRequest(path=Path(path), case_path=Path(tmp) / "opened.case.json", reuse="new"),
                           hide_times=True)
        seen: list[int] = []

        def hook(message) -> None:
            if isinstance(message, OpenProgress):
                seen.append(round(100 * message.fraction))

        async def run() -> None:
            async with app.run_test(size=size, message_hook=hook) as pilot:
                while not ready(app):
                    if app.error:
                        raise RuntimeError(app.error)
                    await pilot.pause(0.005)
                app.close_session()

        asyncio.run(run())
    Path(report).write_text(",".join(str(v) for v in seen), encoding="utf-8")


def measure_keypress(subgroups: int = 200_000, presses: int = 20, size: tuple[int, int] = (120, 36)) -> dict:
    """Median press → repaint time (ms) on the bench with ``subgroups`` subgroups and on an empty app."""
    from workbench.core.model import Settings
    from workbench.tui.app import WorkbenchApp
    from workbench.tui.session import OpenRequest

    ds = generated_dataset(subgroups)
    with tempfile.TemporaryDirectory() as tmp:
        req = OpenRequest(path=Path(tmp) / "generated.csv", settings=Settings(), dataset=ds,
                          case_path=Path(tmp) / "generated.case.json", reuse="new")
        app = WorkbenchApp(req, hide_times=True)
        app_times, empty_times = asyncio.run(_time_presses(app, _empty_app(), size, presses, "right", ready))
    app_ms, empty_ms = statistics.median(app_times), statistics.median(empty_times)
    return {"app_ms": round(app_ms, 3), "empty_ms": round(empty_ms, 3),
            "ratio": round(app_ms / empty_ms, 3) if empty_ms > 0 else float("inf"),
            "subgroups": subgroups, "presses": presses}


if __name__ == "__main__":  # pragma: no cover - manual use
    print(measure_keypress())
