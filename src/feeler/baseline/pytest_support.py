"""The plugin's catalog item: compare the live catalog with the approved baseline, or approve it.

Storage never breaks a run: a missing baseline is not a failure (there is nothing to compare with yet)
and a corrupt one is a warning; xdist workers never write (only the controller does).
"""

from __future__ import annotations

from typing import Any

from feeler.baseline.store import BaselineStore, is_writer
from feeler.catalog import Catalog

__all__ = ["check_catalog_against_baseline"]


def check_catalog_against_baseline(
    target: Any, catalog: Catalog, *, folder: str, approve: bool, is_worker: bool
) -> list[str]:
    """Problems to fail the catalog item with (empty: it matches, or it was approved)."""
    from feeler.diff import diff_catalogs, render

    store = BaselineStore(folder, target.name)
    if approve:
        if is_worker or not is_writer():
            return []  # the controller process writes; workers only compare
        store.write(catalog)
        return []
    approved = store.catalog_or_none()
    if approved is None:
        return []
    report = diff_catalogs(approved, catalog, samples=5, old_label="baseline", new_label="live")
    if not report.changes:
        return []
    breaking = [c for c in report.changes if c.is_breaking]
    head = (
        f"the catalog differs from the approved baseline {store.catalog_path} "
        f"({len(report.changes)} changes, {len(breaking)} breaking; if intended, approve it with "
        f"`feeler approve {target.name}` or pytest --feeler-approve)"
    )
    return [head, render(report, "text")]
