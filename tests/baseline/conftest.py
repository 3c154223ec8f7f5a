"""Fixtures for the baseline tests."""

from __future__ import annotations

import pytest


@pytest.fixture(autouse=True)
def _act_as_controller(monkeypatch: pytest.MonkeyPatch) -> None:
    """These tests write into their own tmp_path, so they act as the writing process even when the suite
    runs under pytest-xdist (where the store refuses writes from workers; one test sets the variable back)."""
    monkeypatch.delenv("PYTEST_XDIST_WORKER", raising=False)
