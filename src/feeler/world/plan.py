"""What the runner asks of the world layer for one tool, in order.

1. :func:`prepare_tool` — before the tool's first case: its schema hints go into the pool (source
   ``schema``), and every known value that would go into its arguments is checked against the schema
   (a usage error names the tool, property, value and keyword).
2. :func:`base_cases` — the fullest and the smallest valid arguments with pool values put in, as go
   cases: the likeliest to enter, so they anchor the no-go cases.
3. every go case (boundary and sampled) goes through :func:`feeler.world.apply.with_values`.
4. :func:`nogo_bases` — the bases no-go cases are built from: entered go arguments first
   (:meth:`ToolWorld.anchors`), then the base cases.
"""

from __future__ import annotations

from typing import Any

from feeler.world.anchor import ToolWorld
from feeler.world.values import ValuePool

__all__ = ["base_cases", "nogo_bases", "prepare_tool"]


def prepare_tool(tool: Any, pool: ValuePool) -> list[Any]:
    """Add *tool*'s schema hints to *pool* and check its known values; returns the base instances.

    :raises UsageError: a known value breaks the schema where it would go.
    :raises SchemaProblem: the schema cannot be used.
    """
    from feeler.generate import compile_schema
    from feeler.generate.cases import base_instances
    from feeler.world.hints import add_schema_hints
    from feeler.world.known import check_known

    ts = compile_schema(tool.input_schema, name=tool.name)
    bases = base_instances(ts)
    add_schema_hints(ts, tool.name, pool, bases)
    check_known(ts, tool.name, pool, bases)
    return bases


def base_cases(tool: Any, pool: ValuePool, bases: list[Any]) -> list[Any]:
    """*bases* with pool values put in, as go cases (only those that took a value: the plain ones are
    reached by the boundary cases anyway)."""
    from feeler.generate import Case
    from feeler.world.apply import with_values

    out = []
    for index, base in enumerate(bases):
        plain = Case("go", None, "$", "", base, None, "boundary", "fullest" if index == 0 else "smallest")
        case = with_values(tool.input_schema, tool.name, plain, pool)
        if case is not plain:
            out.append(case)
    return out


def nogo_bases(world: ToolWorld, tool: Any, pool: ValuePool, bases: list[Any]) -> list[Any]:
    """Entered go arguments first, then *bases* with pool values put in."""
    return world.anchors() + [c.arguments for c in base_cases(tool, pool, bases)] + bases
