"""The plugin's catalog item: compare the live catalog and recorded outputs with the approved
baseline, or approve them.

Storage never breaks a run: a missing baseline is not a failure (there is nothing to compare with yet)
and a corrupt one fails the catalog item; xdist workers never write (only the controller does).
"""

from __future__ import annotations

import os
from typing import Any

from feeler.baseline.store import BaselineStore, is_writer
from feeler.catalog import Catalog

__all__ = ["approve_command", "check_catalog_against_baseline"]


def approve_command(target: Any, folder: str, config: dict[str, Any] | None = None) -> str:
    """The ``feeler approve`` command that writes *target*'s baseline into *folder*, as it runs when pasted
    in the project folder: the target name for a ``[tool.feeler]`` target (its env and bearer variable
    come with it), else the target's options and spec, shell-quoted, secrets left as ``$NAME``."""
    import shlex

    from feeler.redact import redactor_for

    words = target.words(redactor_for(target, config or {}).text)
    return shlex.join(["feeler", "approve", "--baselines", folder, "--yes", *words])


def check_catalog_against_baseline(
    target: Any,
    catalog: Catalog,
    *,
    folder: str,
    approve: bool,
    is_worker: bool,
    session: Any = None,
    config: dict[str, Any] | None = None,
) -> list[str]:
    """Problems to fail the catalog item with (empty: it matches, or it was approved).

    :param session: a live session; with it, recorded outputs are compared (or recorded on approve).
    :param config: the ``[tool.feeler]`` table (masks, ``record_tools``, ``record_per_tool``).
    """
    from feeler.diff import diff_catalogs, render
    from feeler.diff.outputs import OutputMasks, compare_outputs
    from feeler.redact import redactor_for

    cfg = config or {}
    store = BaselineStore.for_target(folder, target)
    if approve:
        if is_worker or not is_writer():
            return []  # the controller process writes; workers only compare
        outputs = None
        if session is not None and (store.outputs_path.exists() or cfg.get("record_tools")):
            from feeler.baseline.record import record_outputs

            outputs = record_outputs(session, catalog, tools=cfg.get("record_tools", []),
                                     per_tool=int(cfg.get("record_per_tool", 3)),
                                     redactor=redactor_for(target, cfg))  # fmt: skip
        store.write(catalog, outputs)
        return []
    if not store.exists():
        return []
    from feeler.errors import BaselineError

    try:  # a corrupt baseline fails the item: it must never let a run pass unnoticed
        approved = store.read_catalog()
    except BaselineError as exc:
        return [f"the approved baseline cannot be used: {exc}"]
    problems: list[str] = []
    report = diff_catalogs(approved, catalog, samples=5, old_label="baseline", new_label="live",
                           allowed_hosts=tuple(str(h) for h in cfg.get("allowed_hosts") or ()))
    if report.changes:
        breaking = [c for c in report.changes if c.is_breaking]
        problems += [
            f"the catalog differs from the approved baseline {store.catalog_path} "
            f"({len(report.changes)} changes, {len(breaking)} breaking; if intended, approve it with "
            f"`{approve_command(target, folder, cfg)}` or pytest --feeler-approve)",
            render(report, "text"),
        ]
    if session is not None and os.path.lexists(store.outputs_path):
        from feeler.baseline.record import rerun_records

        try:
            records = store.read_outputs()
        except BaselineError as exc:
            return problems + [str(exc)]
        changes = compare_outputs(records, rerun_records(session, records, redactor=redactor_for(target, cfg)),
                                  OutputMasks.from_config(cfg))
        if changes:
            problems.append(
                f"{len(changes)} recorded output(s) changed since {store.outputs_path} was approved "
                "(mask volatile fields with output_masks in [tool.feeler]; approve an intended change "
                "with pytest --feeler-approve):"
            )
            problems += [f"  {change}" for change in changes[:20]]
    return problems
