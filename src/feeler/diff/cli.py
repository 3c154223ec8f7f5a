"""``feeler diff OLD NEW``: breaking changes between two catalogs, with witnesses and a semver bump.

Each side is an existing file (a catalog JSON), an existing folder (a baseline folder holding
``catalog.json``), or otherwise a target spec captured live with ``feeler.connect.capture_catalog``.
Exit codes: 0 no breaking change, 1 a breaking or likely-breaking change, 2 usage error.
"""

from __future__ import annotations

import os
from pathlib import Path

import click

from feeler._read import read_json
from feeler.catalog import Catalog
from feeler.cli_options import SECONDS
from feeler.errors import FeelerError, UsageError

__all__ = ["diff", "load_side"]


def load_side(spec: str, *, timeout: float = 30.0) -> tuple[Catalog, str]:
    """Turn one command-line side into a catalog and a label (file, baseline folder, or live target)."""
    path = Path(spec)
    if path.is_dir():
        from feeler.baseline.store import BaselineStore

        return BaselineStore.from_folder(path).read_catalog(), str(path)
    if os.path.lexists(path):  # a file (or a FIFO, device...: refused by the reader without blocking)
        data = read_json(path, what="the catalog file", fix="give a catalog written by `feeler catalog` or a baseline folder")
        return Catalog.from_json(data, source=str(path)), str(path)
    try:
        from feeler.connect import capture_catalog  # lazy: the session layer is heavy and optional here
    except ImportError as exc:
        raise UsageError(f"{spec!r} is not a file or folder, and live targets need feeler.connect "
                         f"({exc}); pass a catalog file written by `feeler catalog`") from exc
    return capture_catalog(spec, timeout=timeout), spec


@click.command("diff")
@click.argument("old")
@click.argument("new")
@click.option("--format", "fmt", type=click.Choice(["text", "markdown", "json"]), default="text",
              show_default=True, help="Report format; markdown suits a pull-request comment or CI summary.")
@click.option("--samples", type=click.IntRange(0, 10_000), default=25, show_default=True,
              help="Instances generated per changed schema when looking for witnesses.")
@click.option("--timeout", type=SECONDS, default=30.0, show_default=True, help="Seconds per live capture.")
@click.option("--summary-file", type=click.Path(dir_okay=False), default=None,
              help="Also append the Markdown report to this file (default: $GITHUB_STEP_SUMMARY when set "
                   "and --format markdown).")
def diff(old: str, new: str, fmt: str, samples: int, timeout: float, summary_file: str | None) -> None:
    """Compare OLD and NEW catalogs; exit 1 on a breaking change.

    OLD and NEW are each a catalog file, a baseline folder, or a target (URL, module:attribute, or a
    quoted command line).
    """
    from feeler.diff.catalog import diff_catalogs
    from feeler.diff.report import render

    try:
        old_cat, old_label = load_side(old, timeout=timeout)
        new_cat, new_label = load_side(new, timeout=timeout)
    except FeelerError as exc:
        raise click.UsageError(str(exc)) from exc
    from feeler.config import load_config

    hosts = tuple(str(h) for h in load_config().get("allowed_hosts") or ())  # links to these are no finding
    report = diff_catalogs(old_cat, new_cat, samples=samples, old_label=old_label, new_label=new_label, allowed_hosts=hosts)
    click.echo(render(report, fmt), nl=False)
    target = summary_file or (os.environ.get("GITHUB_STEP_SUMMARY") if fmt == "markdown" else None)
    if target:
        try:
            with open(target, "a", encoding="utf-8") as fh:
                fh.write(render(report, "markdown"))
        except OSError as exc:  # a summary is a nicety: never turn it into a failed diff
            click.echo(f"feeler diff: could not write the summary to {target}: {exc}", err=True)
    raise SystemExit(report.exit_code)
