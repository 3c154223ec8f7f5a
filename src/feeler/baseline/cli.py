"""``feeler approve TARGET``: show the differences against the stored baseline, then write the new one.

On a terminal it asks first; in scripts pass ``--yes``. Without either it refuses (exit 2).
"""

from __future__ import annotations

import sys
from typing import Any

import click

from feeler.cli_options import ConnectOptions, apply_renamed, renamed_option, target_options
from feeler.errors import FeelerError

__all__ = ["approve"]


def _is_terminal() -> bool:
    """Whether stdin is an interactive terminal (a test patches this)."""
    try:
        return sys.stdin.isatty()
    except (AttributeError, ValueError):
        return False


@click.command("approve")
@target_options(old_revision=False)  # approve's former --revision is --source-ref
@click.option("--baselines", "root", type=click.Path(file_okay=False), default=None,
              help="Folder holding one baseline folder per target [baselines, or baselines in [tool.feeler]].")
@click.option("--name", default=None,
              help="Name of the baseline folder (default: the target name, or a slug of the target).")
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
def approve(root: str | None, name: str | None, outputs_file: str | None, record_outputs: bool,
            record_tools: tuple[str, ...], per_tool: int | None, source_ref: str | None, yes: bool,
            **kwargs: Any) -> None:
    """Record TARGET's catalog as the approved baseline, after showing what changed.

    TARGET is a [tool.feeler] target name, a URL, module:attribute, a command after `--`, or a stored
    catalog (a catalog file or a baseline folder). The baseline folder is named after the target name
    (a slug of the target for one given on the command line).
    """
    from feeler.baseline.approve import approve as run_approve
    from feeler.baseline.store import BaselineStore
    from feeler.config import load_config
    from feeler.diff.cli import is_catalog_path, load_side
    from feeler.diff.outputs import OutputMasks

    source_ref = source_ref or apply_renamed({"source_ref": None})["source_ref"]
    if not yes and not _is_terminal():
        raise click.UsageError("stdin is not a terminal, so feeler cannot ask before writing the baseline; "
                               "pass --yes to write it")
    if record_outputs and outputs_file:
        raise click.UsageError("give either --outputs FILE or --record-outputs, not both")
    try:
        config = load_config()
        root = root or str(config.get("baselines", "baselines"))
        masks = OutputMasks.from_config(config.values)
        words = kwargs["target"]
        outputs = None
        if len(words) == 1 and words[0] not in config.targets() and is_catalog_path(words[0]):
            if record_outputs:
                raise click.UsageError(f"{words[0]} is a stored catalog; --record-outputs needs a live target")
            catalog, label = load_side(words[0], config=config)
            store = BaselineStore(root, name or label)
        else:
            opts = ConnectOptions(kwargs, config)
            catalog, outputs = _capture(opts, record_outputs, list(record_tools) or list(config.get("record_tools", [])),
                                        per_tool or int(config.get("record_per_tool", 3)))
            store = BaselineStore(root, name) if name else BaselineStore.for_target(root, opts.target)
        if outputs_file:
            from feeler._read import read_json

            outputs = read_json(outputs_file, what="the outputs file", expect=list,
                                fix="give a JSON list of {tool, arguments, result} objects")
        result = run_approve(store, catalog, outputs, source_ref=source_ref, echo=click.echo, masks=masks,
                             allowed_hosts=tuple(str(h) for h in config.get("allowed_hosts") or ()),
                             confirm=(lambda _q: True) if yes else (lambda q: click.confirm(q, default=False)))
    except FeelerError as exc:
        raise click.ClickException(str(exc)) from exc
    if result.status == "refused":
        raise SystemExit(1)  # the exit code also when run as a plain click command


def _capture(opts: Any, record: bool, tools: list[str], per_tool: int) -> tuple[Any, list[dict[str, Any]] | None]:
    """Capture the catalog and, with *record*, record pinned outputs in the same session."""
    from feeler.baseline.record import record_outputs
    from feeler.connect import capture, connected
    from feeler.redact import redactor_for

    with connected(opts.target, **opts.session) as session:
        catalog = capture(session)
        if not record:
            return catalog, None
        outputs = record_outputs(session, catalog, tools=tools, per_tool=per_tool,
                                 redactor=redactor_for(opts.target, opts.config.values))
    click.echo(f"feeler approve: recorded {len(outputs)} output(s) of {len({r['tool'] for r in outputs})} tool(s)")
    return catalog, outputs
