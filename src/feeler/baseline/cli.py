"""``feeler approve TARGET``: show the differences against the stored baseline, then write the new one.

On a terminal it asks first; in scripts pass ``--yes``. Without either it refuses (exit 2).
"""

from __future__ import annotations

import sys

import click

from feeler.cli_options import SECONDS
from feeler.cli_options import apply_renamed, renamed_option
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
@click.option("--record-outputs", is_flag=True,
              help="Also call the target's read-only tools with their pinned go cases and store the results.")
@click.option("--record-tools", multiple=True, metavar="PATTERN",
              help="With --record-outputs: also record these tools (glob; '*' = every tool not annotated "
                   "destructive). Never against production: the tools are called for real.")
@click.option("--per-tool", type=click.IntRange(1, 100), default=None, help="Pinned go cases per recorded tool [3].")
@click.option("--source-ref", default=None, metavar="REF",
              help="Code revision of the server to record in the header as sourceRef (e.g. a git commit).")
@renamed_option("--revision", "--source-ref", "source_ref")
@click.option("--yes", "-y", is_flag=True, help="Write without asking (for scripts and CI).")
@click.option("--timeout", type=SECONDS, default=30.0, show_default=True, help="Seconds for a live capture.")
def approve(target: str, root: str, name: str | None, outputs_file: str | None, record_outputs: bool,
            record_tools: tuple[str, ...], per_tool: int | None, source_ref: str | None, yes: bool,
            timeout: float) -> None:
    """Record TARGET's catalog as the approved baseline, after showing what changed.

    TARGET is a catalog file or a live target (URL, module:attribute, or a quoted command line).
    """
    from feeler.baseline.approve import approve as run_approve
    from feeler.baseline.store import BaselineStore
    from feeler.diff.cli import load_side

    source_ref = source_ref or apply_renamed({"source_ref": None})["source_ref"]
    if not yes and not _is_terminal():
        raise click.UsageError("stdin is not a terminal, so feeler cannot ask before writing the baseline; "
                               "pass --yes to write it")
    from feeler.config import load_config
    from feeler.diff.outputs import OutputMasks

    if record_outputs and outputs_file:
        raise click.UsageError("give either --outputs FILE or --record-outputs, not both")
    try:
        config = load_config()
        masks = OutputMasks.from_config(config.values)
        outputs = None
        if record_outputs:
            catalog, label, outputs = _record(target, timeout, list(record_tools) or list(config.get("record_tools", [])),
                                              per_tool or int(config.get("record_per_tool", 3)))
        else:
            catalog, label = load_side(target, timeout=timeout)
        if outputs_file:
            from feeler._read import read_json

            outputs = read_json(outputs_file, what="the outputs file", expect=list,
                                fix="give a JSON list of {tool, arguments, result} objects")
        store = BaselineStore(root, name or label)
        result = run_approve(store, catalog, outputs, source_ref=source_ref, echo=click.echo, masks=masks,
                             confirm=(lambda _q: True) if yes else (lambda q: click.confirm(q, default=False)))
    except FeelerError as exc:
        raise click.ClickException(str(exc)) from exc
    if result.status == "refused":
        raise SystemExit(1)


def _record(target: str, timeout: float, tools: list[str], per_tool: int) -> tuple[object, str, list[dict]]:
    """Capture the catalog and record pinned outputs in one session."""
    from pathlib import Path as _Path

    from feeler.baseline.record import record_outputs
    from feeler.connect import capture, connected

    if _Path(target).exists():
        raise click.UsageError(f"{target} is a file or folder; --record-outputs needs a live target")
    with connected(target, timeout=timeout) as session:
        catalog = capture(session)
        from feeler.config import load_config
        from feeler.redact import redactor_for
        from feeler.target import Target

        outputs = record_outputs(session, catalog, tools=tools, per_tool=per_tool,
                                 redactor=redactor_for(Target.parse(target), load_config().values))
    click.echo(f"feeler approve: recorded {len(outputs)} output(s) of {len({r['tool'] for r in outputs})} tool(s)")
    return catalog, target, outputs
