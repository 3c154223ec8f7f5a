"""``feeler report merge`` and ``feeler report render``; the ``--report-dir`` options shared by commands."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import click

__all__ = ["report", "report_options", "write_from_options"]

_FORMAT_NAMES = ("json", "markdown", "junit", "sarif", "html")


def report_options(func: Callable[..., Any]) -> Callable[..., Any]:
    """``--report-dir DIR`` and ``--report-format NAME`` (repeatable; default: every format)."""
    func = click.option(
        "--report-format", "report_formats", multiple=True, type=click.Choice(_FORMAT_NAMES),
        help="Write only these report formats into --report-dir (repeatable) [all].",
    )(func)  # fmt: skip
    return click.option(
        "--report-dir", default=None, metavar="DIR",
        help="Write the reports (JSON, Markdown, JUnit XML, SARIF, HTML) into DIR.",
    )(func)  # fmt: skip


def write_from_options(doc: dict[str, Any], folder: str | None, formats: tuple[str, ...]) -> list[str]:
    from feeler.report import write_reports

    if not folder:
        return []
    paths = write_reports(doc, folder, list(formats) or None)
    click.echo(f"feeler: reports written to {folder} ({', '.join(formats) or 'all formats'})", err=True)
    return paths


@click.group("report")
def report() -> None:
    """Join and render report documents (feeler-report.json files)."""


@report.command("merge")
@click.argument("files", nargs=-1, required=True, type=click.Path(dir_okay=False))
@report_options
def merge(files: tuple[str, ...], report_dir: str | None, report_formats: tuple[str, ...]) -> int:
    """Join the JSON reports FILES (shards, workers) into one report; print its Markdown summary.

    Exit code 1 when the merged report holds an error finding.
    """
    from feeler.report import load_report, merge_reports, render

    doc = merge_reports([load_report(path) for path in files])
    write_from_options(doc, report_dir or None, report_formats)
    click.echo(render(doc, "markdown"), nl=False)
    return 1 if doc["totals"]["errors"] else 0


@report.command("render")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--format", "fmt", type=click.Choice(_FORMAT_NAMES), default="markdown", show_default=True)
def render_command(file: str, fmt: str) -> int:
    """Print the JSON report FILE in another format."""
    from feeler.report import load_report, render

    click.echo(render(load_report(file), fmt), nl=False)
    return 0
