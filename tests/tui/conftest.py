"""Fixtures for the terminal workbench tests (helpers are in tui_helpers.py)."""
from __future__ import annotations

import pytest


@pytest.fixture
def in_tmp(tmp_path, monkeypatch):
    """Run in a scratch folder so case files land in tmp_path/casefiles."""
    monkeypatch.chdir(tmp_path)
    return tmp_path


@pytest.fixture
def opened():
    """The shared Pilot set-up: ``async with opened(app, size=(120, 36)) as pilot`` runs the app at a fixed
    terminal size (the demo's app when none is given) and waits until its workers are done (no sleeps)."""
    from contextlib import asynccontextmanager

    from tui_helpers import demo_app, settle

    @asynccontextmanager
    async def _open(app=None, size=(120, 36), **kw):
        app = app if app is not None else demo_app()
        async with app.run_test(size=size, **kw) as pilot:
            await settle(pilot)
            yield pilot

    return _open
