"""Approve: show what changed against the stored baseline, then write the new one if confirmed."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from feeler.baseline.store import BaselineStore, stale_records
from feeler.catalog import Catalog
from feeler.diff.catalog import DiffReport, diff_catalogs
from feeler.diff.outputs import OutputChange, OutputMasks, compare_outputs
from feeler.diff.report import render

__all__ = ["ApproveResult", "approve", "describe"]


@dataclass
class ApproveResult:
    """What :func:`approve` did.

    :param status: ``"unchanged"`` (nothing to write), ``"refused"`` (not confirmed) or ``"written"``.
    :param written: the files written (empty unless written).
    """

    status: str
    report: DiffReport
    output_changes: list[OutputChange] = field(default_factory=list)
    stale: list[Mapping[str, Any]] = field(default_factory=list)
    written: list[Path] = field(default_factory=list)


def describe(store: BaselineStore, catalog: Catalog, outputs: list[Mapping[str, Any]] | None,
             masks: OutputMasks | None = None, samples: int = 10,
             allowed_hosts: tuple[str, ...] = ()) -> tuple[str, ApproveResult]:
    """The text shown before approving, and a result prefilled with the differences (*allowed_hosts*:
    hosts a description may link to, ``allowed_hosts`` of ``[tool.feeler]``)."""
    old = store.catalog_or_none() if store.exists() else None
    if old is None:
        report = DiffReport([], "(no baseline)", "new")
        text = f"feeler approve: no baseline at {store.folder} yet; {len(catalog.tools)} tool(s) will be recorded\n"
    else:
        report = diff_catalogs(old, catalog, samples=samples, old_label=str(store.catalog_path), new_label="new",
                               allowed_hosts=allowed_hosts)
        text = render(report, "text")
    out_changes: list[OutputChange] = []
    stale: list[Mapping[str, Any]] = []
    if outputs is not None:
        recorded = store.read_outputs() if store.outputs_path.exists() else []
        out_changes = compare_outputs(recorded, outputs, masks)
        stale = stale_records(recorded, catalog)
        if out_changes:
            text += "outputs:\n" + "".join(f"  {c}\n" for c in out_changes)
        for r in stale:
            text += f"  stale: recorded output for tool {r.get('tool')!r}, which no longer exists\n"
    return text, ApproveResult("unchanged", report, out_changes, stale)


def approve(store: BaselineStore, catalog: Catalog, outputs: list[Mapping[str, Any]] | None = None, *,
            confirm: Callable[[str], bool], echo: Callable[[str], None] = print,
            masks: OutputMasks | None = None, source_ref: str | None = None, samples: int = 10,
            allowed_hosts: tuple[str, ...] = ()) -> ApproveResult:
    """Show the differences between the baseline and *catalog* (and *outputs*), then write if confirmed.

    :param confirm: asked "Write ...?" and returns True to write; the CLI passes ``click.confirm`` on a
        terminal or ``lambda _: True`` for ``--yes``.
    :param echo: where the differences are shown.
    :param source_ref: the code revision recorded in the header (``sourceRef``).
    :param allowed_hosts: hosts a description may link to (no poisoned-text review for links to them).
    """
    text, result = describe(store, catalog, outputs, masks, samples, allowed_hosts)
    echo(text.rstrip("\n"))
    rendered = store.render(catalog, outputs, {})
    if store.exists() and not any(store._differs(p, t) for p, t in rendered.items()) and not source_ref:
        echo(f"feeler approve: {store.folder} already matches; nothing written")
        return result
    if not confirm(f"Write the new baseline to {store.folder}?"):
        result.status = "refused"
        echo("feeler approve: nothing written")
        return result
    result.written = store.write(catalog, outputs, source_ref=source_ref)
    result.status = "written"
    echo(f"feeler approve: wrote {', '.join(str(p) for p in result.written) or 'nothing (unchanged)'}")
    return result
