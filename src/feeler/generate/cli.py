"""``feeler cases SCHEMA_FILE``: print the go and no-go cases for one schema as JSON Lines.

The lead wires the command into the ``feeler`` group (``"cases": "feeler.generate.cli:cases"``).
"""

from __future__ import annotations

import json
import sys
from typing import Any

import click

from feeler._read import read_json
from feeler.cli_options import apply_renamed, renamed_option
from feeler.errors import SchemaProblem, UsageError
from feeler.generate._model import compile_schema
from feeler.generate._schema import ToolSchema
from feeler.generate.cases import Tally, go_cases, nogo_cases

__all__ = ["cases", "load_schema"]


def load_schema(path: str) -> tuple[Any, str | None]:
    """Read *path*: a JSON Schema, or a tool object carrying ``inputSchema``. Returns ``(schema, tool name)``.

    :raises click.UsageError: unreadable file or invalid JSON (with line and column).
    """
    try:
        document = read_json(path, what="the schema file", expect=(dict, bool),
                             fix="give a JSON Schema or a tool object with an inputSchema")
    except UsageError as exc:
        raise click.UsageError(str(exc)) from None
    if isinstance(document, dict) and isinstance(document.get("inputSchema"), (dict, bool)):
        name = document.get("name")
        return document["inputSchema"], name if isinstance(name, str) else None
    return document, None


@click.command("cases")
@click.argument("schema_file", type=click.Path(dir_okay=False, allow_dash=False))
@click.option("--sample-seed", type=int, default=0, show_default=True, help="Seed of the sampled go cases.")
@click.option("--samples", type=click.IntRange(min=0), default=0, show_default=True,
              help="How many sampled go cases to add after the boundary cases.")  # fmt: skip
@renamed_option("--seed", "--sample-seed", "sample_seed", type=int)
@renamed_option("--go", "--samples", "samples", type=click.IntRange(min=0))
@click.option("--kind", type=click.Choice(["all", "go", "no-go"]), default="all", show_default=True,
              help="Print only go or only no-go cases.")  # fmt: skip
def cases(schema_file: str, sample_seed: int, samples: int, kind: str) -> None:
    """Print the go and no-go cases feeler would send for SCHEMA_FILE, one JSON object a line.

    SCHEMA_FILE holds a JSON Schema, or a tool object with an ``inputSchema``. Each line has
    ``kind`` (go or no-go), ``keyword``, ``keywordLocation`` and ``instanceLocation`` (JSON Pointers),
    ``source``, ``note``, ``error`` and ``arguments``. Every case was checked with jsonschema before it
    is printed.
    """
    renamed = apply_renamed({"sample_seed": None, "samples": None})
    sample_seed = renamed["sample_seed"] if renamed["sample_seed"] is not None else sample_seed
    samples = renamed["samples"] if renamed["samples"] is not None else samples
    schema, name = load_schema(schema_file)
    try:
        ts = compile_schema(schema, name=name)
        tally = Tally()
        found = []
        if kind in ("all", "go"):
            found += go_cases(ts, draws=samples, seed=sample_seed, tally=tally)
        if kind in ("all", "no-go"):
            found += nogo_cases(ts, tally=tally)
    except SchemaProblem as exc:
        raise click.UsageError(f"{schema_file}: {exc} [{exc.reason}]") from exc
    for case in found:
        click.echo(json.dumps(case.as_json(), ensure_ascii=False))
    click.echo(
        f"{sum(c.kind == 'go' for c in found)} go, {sum(c.kind == 'no-go' for c in found)} no-go cases; "
        f"refuted by the oracle and dropped: {tally.refuted_go} go, {tally.refuted_nogo} no-go",
        err=True,
    )


if __name__ == "__main__":  # pragma: no cover
    sys.exit(cases())
