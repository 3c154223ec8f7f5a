"""The project's own baselines/ holds the demo server's approved catalog; the suite fails if the demo drifts."""

from __future__ import annotations

from pathlib import Path

import pytest

from feeler.baseline import BaselineStore
from feeler.diff import diff_catalogs, render

ROOT = Path(__file__).resolve().parents[2] / "baselines"
TARGET = "feeler.demo.server:server"


def test_demo_matches_its_approved_baseline() -> None:
    store = BaselineStore(ROOT, TARGET)
    if not store.exists():
        pytest.fail(f"no approved baseline at {store.folder}; record it with "
                    f"`feeler approve {TARGET} --yes` from the project root")
    from feeler.connect import capture_catalog

    report = diff_catalogs(store.read_catalog(), capture_catalog(TARGET), samples=5)
    assert report.changes == [], "the demo drifted from its baseline; if intended, run `feeler approve " \
        f"{TARGET}`:\n{render(report)}"
