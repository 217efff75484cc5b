"""Shared test set-up."""

from __future__ import annotations

import pytest


@pytest.fixture(autouse=True)
def _no_progress_display(monkeypatch):
    # Progress lines depend on how fast the machine is; tests that count stderr lines must not
    # see them. tests/test_progress.py drives the display directly.
    monkeypatch.setenv("MAPSECTION_PROGRESS", "off")
