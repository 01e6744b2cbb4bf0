"""Fixtures for the terminal workbench tests (helpers are in tui_helpers.py)."""
from __future__ import annotations

import pytest


@pytest.fixture
def in_tmp(tmp_path, monkeypatch):
    """Run in a scratch folder so case files land in tmp_path/casefiles."""
    monkeypatch.chdir(tmp_path)
    return tmp_path
