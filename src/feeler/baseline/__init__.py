"""Approved baselines: the store, and the approve workflow (issue 5)."""
from __future__ import annotations

from feeler.baseline.approve import ApproveResult, approve
from feeler.baseline.store import (
    BASELINE_FORMAT,
    BaselineStore,
    BaselineWarning,
    is_writer,
    stale_baselines,
    stale_records,
    target_slug,
    writer_lock,
)

__all__ = [
    "BASELINE_FORMAT",
    "ApproveResult",
    "BaselineStore",
    "BaselineWarning",
    "approve",
    "is_writer",
    "stale_baselines",
    "stale_records",
    "target_slug",
    "writer_lock",
]
