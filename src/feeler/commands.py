"""``feeler catalog`` and ``feeler demo``."""

from __future__ import annotations

import sys
from typing import Any

import click

from feeler._files import write_text_atomic
from feeler.catalog import Catalog
from feeler.cli_options import ConnectOptions, apply_renamed, renamed_option, target_options
from feeler.connect import capture_catalog
from feeler.errors import UsageError

__all__ = ["catalog", "demo", "summary"]


def summary(cat: Catalog) -> str:
    """A few lines a person reads: server, protocol version, and one line per tool."""
    server = cat.server.get("name", "?") + (f" {cat.server['version']}" if cat.server.get("version") else "")
    lines = [
        f"server {server}, protocol version {cat.revision} ({cat.era} era)",
        f"{len(cat.tools)} tools, {len(cat.prompts)} prompts, {len(cat.resources)} resources, "
        f"{len(cat.resource_templates)} resource templates",
    ]
    for tool in cat.tool_list():
        flags = []
        if tool.destructive:
            flags.append("destructive")
        if not tool.annotated:
            flags.append("no annotations")
        if tool.output_schema is not None:
            flags.append("outputSchema")
        props = (tool.input_schema or {}).get("properties", {}) if isinstance(tool.input_schema, dict) else {}
        lines.append(f"  {tool.name} ({len(props)} arguments{', ' + ', '.join(flags) if flags else ''})")
    return "\n".join(lines)


@click.command("catalog")
@target_options
@click.option("-o", "--output", type=click.Path(dir_okay=False), help="Write the catalog here instead of standard output.")
def catalog(output: str | None, **kwargs: Any) -> int:
    """Capture what TARGET advertises (tools, prompts, resources, capabilities) as canonical JSON.

    \b
    TARGET is one of:
      feeler catalog -- python my_server.py --flag     (stdio command, after --)
      feeler catalog http://127.0.0.1:8000/mcp         (Streamable HTTP)
      feeler catalog --sse http://127.0.0.1:8000/sse   (legacy HTTP+SSE)
      feeler catalog my_package.server:app             (official SDK server object, in-process)
    """
    opts = ConnectOptions(kwargs)
    cat = capture_catalog(opts.target, **opts.session)
    text = cat.dumps()
    if output:
        try:
            write_text_atomic(output, text)
        except OSError as exc:
            raise UsageError(f"cannot write the catalog to {output}: {exc.strerror or exc}") from exc
        click.echo(f"feeler: wrote the catalog of {opts.target.name} to {output} ({len(cat.tools)} tools)", err=True)
    else:
        click.echo(text, nl=False)
    return 0


@click.command("demo")
@click.option("--samples", type=click.IntRange(min=0), default=10, show_default=True, help="Sampled go cases per tool.")
@renamed_option("--go-examples", "--samples", "samples", type=click.IntRange(min=0))
@click.option("--replay-dir", default=".feeler/replays", show_default=True, help="Where replay files go.")
def demo(samples: int, replay_dir: str) -> int:
    """Check feeler's bundled demo server (a harbour office with a few defects), served over stdio.

    Shows what feeler does on a server you do not have to write: the demo's catalog, then every
    finding. Exit code 1 means findings, as with `feeler check`.
    """
    from feeler.check.report import report_text
    from feeler.check.runner import RunOptions, Runner
    from feeler.target import Target

    target = Target(kind="stdio", command=(sys.executable, "-m", "feeler.demo"))
    progress = (lambda line: click.echo(line, err=True)) if sys.stderr.isatty() else None
    samples = apply_renamed({"samples": None}).get("samples") or samples
    runner = Runner(target, RunOptions(samples=samples, replay_dir=replay_dir), progress=progress)
    report = runner.run()
    assert report.catalog is not None
    click.echo(summary(report.catalog))
    click.echo("")
    click.echo(report_text(report), nl=False)
    click.echo(
        "\nThe demo carries planted defects on purpose; each finding above comes with a replay file.\n"
        "Point feeler at your own server: feeler check -- python your_server.py"
    )
    return report.exit_code()
