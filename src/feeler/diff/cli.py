"""``feeler diff OLD NEW``: breaking changes between two catalogs, with witnesses and a semver bump.

Each side is a ``[tool.feeler]`` target name, an existing file (a catalog JSON), an existing folder (a
baseline folder holding ``catalog.json``), or otherwise a target (URL, ``module:attribute``, a quoted
command line) captured live with ``feeler.connect.capture_catalog``. A command after ``--`` cannot name
two sides. Exit codes: 0 no breaking change, 1 a breaking or likely-breaking change, 2 usage error.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

import click

from feeler._read import read_json
from feeler.catalog import Catalog
from feeler.cli_options import SECONDS
from feeler.errors import FeelerError

__all__ = ["diff", "is_catalog_path", "load_side"]


def is_catalog_path(spec: str) -> bool:
    """Whether *spec* names a stored catalog: an existing folder (a baseline folder), or an existing file
    that is not an executable program (a program given alone is a server to start)."""
    if os.path.isdir(spec):
        return True
    if not os.path.lexists(spec):  # a FIFO, device... counts as a file: refused by the reader without blocking
        return False
    return spec.endswith(".json") or not (os.path.isfile(spec) and os.access(spec, os.X_OK))


def load_side(spec: str, *, timeout: float = 30.0, config: Any = None) -> tuple[Catalog, str]:
    """Turn one command-line side into a catalog and a label (target name, file, baseline folder, or a
    live target)."""
    from feeler.config import load_config
    from feeler.target import resolve_target

    config = config if config is not None else load_config()
    named = config.targets()
    if spec not in named and is_catalog_path(spec):
        path = Path(spec)
        if path.is_dir():
            from feeler.baseline.store import BaselineStore

            return BaselineStore.from_folder(path).read_catalog(), str(path)
        data = read_json(path, what="the catalog file", fix="give a catalog written by `feeler catalog` or a baseline folder")
        return Catalog.from_json(data, source=str(path)), str(path)
    from feeler.connect import capture_catalog  # lazy: the session layer is heavy

    target = resolve_target(spec, named)
    revision = config.get("protocol_version")
    return capture_catalog(target, timeout=timeout, revision=revision), target.name


_TWO_SIDES = ("a command after `--` cannot name two sides: name each in [tool.feeler] targets or quote each "
              "command line ('python old_server.py')")


class _TwoSides(click.Command):
    """``feeler diff``: refuses ``--`` before parsing (after it, every word would be one side's)."""

    def parse_args(self, ctx: click.Context, args: list[str]) -> list[str]:
        if "--" in args:
            raise click.UsageError(f"diff compares two sides, OLD and NEW; {_TWO_SIDES}", ctx)
        return super().parse_args(ctx, args)


@click.command("diff", cls=_TwoSides)
@click.argument("sides", nargs=-1, required=True, metavar="OLD NEW")
@click.option("--format", "fmt", type=click.Choice(["text", "markdown", "json"]), default="text",
              show_default=True, help="Report format; markdown suits a pull-request comment or CI summary.")
@click.option("--samples", type=click.IntRange(0, 10_000), default=25, show_default=True,
              help="Instances generated per changed schema when looking for witnesses.")
@click.option("--timeout", type=SECONDS, default=30.0, show_default=True, help="Seconds per live capture.")
@click.option("--summary-file", type=click.Path(dir_okay=False), default=None,
              help="Also append the Markdown report to this file (default: $GITHUB_STEP_SUMMARY when set "
                   "and --format markdown).")
def diff(sides: tuple[str, ...], fmt: str, samples: int, timeout: float, summary_file: str | None) -> None:
    """Compare OLD and NEW catalogs; exit 1 on a breaking change.

    OLD and NEW are each a [tool.feeler] target name, a catalog file, a baseline folder, a URL,
    module:attribute, or a quoted command line ('python old_server.py'). A command after `--` cannot
    name two sides: name each in [tool.feeler] targets or quote each command line.
    """
    from feeler.diff.catalog import diff_catalogs
    from feeler.diff.report import render

    if len(sides) != 2:
        raise click.UsageError(f"diff compares two sides, OLD and NEW; got {len(sides)} ({' '.join(sides)}); {_TWO_SIDES}")
    old, new = sides
    from feeler.config import load_config

    try:
        config = load_config()
        old_cat, old_label = load_side(old, timeout=timeout, config=config)
        new_cat, new_label = load_side(new, timeout=timeout, config=config)
    except FeelerError as exc:
        raise click.UsageError(str(exc)) from exc
    hosts = tuple(str(h) for h in config.get("allowed_hosts") or ())  # links to these are no finding
    report = diff_catalogs(old_cat, new_cat, samples=samples, old_label=old_label, new_label=new_label, allowed_hosts=hosts)
    click.echo(render(report, fmt), nl=False)
    target = summary_file or (os.environ.get("GITHUB_STEP_SUMMARY") if fmt == "markdown" else None)
    if target:
        try:
            with open(target, "a", encoding="utf-8") as fh:
                fh.write(render(report, "markdown"))
        except OSError as exc:  # a summary is a nicety: never turn it into a failed diff
            click.echo(f"feeler diff: could not write the summary to {target}: {exc}", err=True)
    raise SystemExit(report.exit_code)  # the exit code also when run as a plain click command
