"""``feeler approve TARGET``: show the differences against the stored baseline, then write the new one.

On a terminal it asks first; in scripts pass ``--yes``. Without either it refuses (exit 2).
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import click

from feeler.errors import FeelerError

__all__ = ["approve"]


def _is_terminal() -> bool:
    """Whether stdin is an interactive terminal (a test patches this)."""
    try:
        return sys.stdin.isatty()
    except (AttributeError, ValueError):
        return False


@click.command("approve")
@click.argument("target")
@click.option("--baselines", "root", type=click.Path(file_okay=False), default="baselines", show_default=True,
              help="Folder holding one baseline folder per target.")
@click.option("--name", default=None, help="Target name for the baseline folder (default: TARGET itself).")
@click.option("--outputs", "outputs_file", type=click.Path(exists=True, dir_okay=False), default=None,
              help="JSON list of recorded outputs [{tool, arguments, result}] to store beside the catalog.")
@click.option("--revision", default=None, help="Code revision to record in the header (e.g. a git commit).")
@click.option("--yes", "-y", is_flag=True, help="Write without asking (for scripts and CI).")
@click.option("--timeout", type=float, default=30.0, show_default=True, help="Seconds for a live capture.")
def approve(target: str, root: str, name: str | None, outputs_file: str | None, revision: str | None, yes: bool,
            timeout: float) -> None:
    """Record TARGET's catalog as the approved baseline, after showing what changed.

    TARGET is a catalog file or a live target (URL, module:attribute, or a quoted command line).
    """
    from feeler.baseline.approve import approve as run_approve
    from feeler.baseline.store import BaselineStore
    from feeler.diff.cli import load_side

    if not yes and not _is_terminal():
        raise click.UsageError("stdin is not a terminal, so feeler cannot ask before writing the baseline; "
                               "pass --yes to write it")
    try:
        catalog, label = load_side(target, timeout=timeout)
        outputs = None
        if outputs_file:
            try:
                outputs = json.loads(Path(outputs_file).read_text(encoding="utf-8"))
            except ValueError as exc:
                raise click.UsageError(f"{outputs_file}: not valid JSON ({exc})") from exc
            if not isinstance(outputs, list):
                raise click.UsageError(f"{outputs_file}: expected a JSON list of {{tool, arguments, result}}")
        store = BaselineStore(root, name or label)
        result = run_approve(store, catalog, outputs, revision=revision, echo=click.echo,
                             confirm=(lambda _q: True) if yes else (lambda q: click.confirm(q, default=False)))
    except FeelerError as exc:
        raise click.ClickException(str(exc)) from exc
    if result.status == "refused":
        raise SystemExit(1)
