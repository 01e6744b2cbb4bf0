"""Helpers for the terminal workbench tests: the demo app, waiting without sleeps, screen text."""
from __future__ import annotations

import json

from workbench.demo import DEMO_DIR, demo_path, demo_settings_for
from workbench.tui.app import WorkbenchApp
from workbench.tui.session import OpenRequest


async def workers_done(app) -> None:
    """Wait for the running workers; one that a newer request replaced (cancelled) is fine."""
    from textual.worker import WorkerCancelled
    for worker in list(app.workers):
        if worker.is_running:
            try:
                await worker.wait()
            except WorkerCancelled:
                pass


async def settle(pilot) -> None:
    """Wait until no worker runs and every message they posted has been handled (no sleeps)."""
    app = pilot.app
    for _ in range(100):
        await workers_done(app)
        await pilot.pause()
        if not any(w.is_running for w in app.workers):
            await pilot.pause()
            if not any(w.is_running for w in app.workers):
                return


def demo_app(**kw) -> WorkbenchApp:
    """The app as ``workbench`` with no arguments starts it (reusing the demo's case when it exists)."""
    path = demo_path()
    return WorkbenchApp(OpenRequest(path, settings=demo_settings_for(path), reuse="reuse"), hide_times=True, **kw)


def data_app(path, **kw) -> WorkbenchApp:
    """The app as ``workbench open PATH`` starts it."""
    from pathlib import Path
    return WorkbenchApp(OpenRequest(Path(path), **kw), hide_times=True)


def screen_text(app) -> str:
    """The characters on the screen now (styles dropped)."""
    strips = app.screen._compositor.render_strips()
    return "\n".join("".join(seg.text for seg in strip) for strip in strips)


def planted_causes() -> list[dict]:
    """The causes the demo generator planted (demo_data/planted.json)."""
    return json.loads((DEMO_DIR / "planted.json").read_text(encoding="utf-8"))
