"""Limits on the schemas feeler works with, checked once before any recursive work starts.

A schema nested hundreds of levels deep makes every recursive walker (``jsonschema`` included) hit
Python's recursion limit; a multi-megabyte schema or a huge ``enum`` makes generation and diffing run
for minutes. :func:`schema_limit_problem` walks the schema *iteratively* (no recursion, so it cannot
overflow itself) and stops at the first limit crossed. Real tool schemas are far below every limit
(common practice: a few kilobytes, a handful of levels).
"""

from __future__ import annotations

from typing import Any

from feeler.errors import SchemaProblem

__all__ = ["MAX_DEPTH", "MAX_ENUM", "MAX_SCHEMA_BYTES", "check_schema_limits", "schema_limit_problem"]

#: Nesting of JSON containers (objects and arrays); one schema level under ``properties`` is two.
MAX_DEPTH = 64
#: An estimate of the schema's size as JSON text (keys, strings and numbers counted).
MAX_SCHEMA_BYTES = 1024 * 1024
#: Values in one ``enum``.
MAX_ENUM = 5000


def schema_limit_problem(schema: Any) -> str | None:
    """A one-line description of the first limit *schema* crosses, or None when it is within all of them."""
    stack: list[tuple[Any, int, str]] = [(schema, 1, "")]
    size = 0
    while stack:  # bounded: every node is visited once, and the walk stops past MAX_SCHEMA_BYTES
        node, depth, where = stack.pop()
        if isinstance(node, (dict, list)) and depth > MAX_DEPTH:
            return (f"the schema nests more than {MAX_DEPTH} levels deep (at {_short(where)}); feeler refuses it "
                    "rather than risk a recursion overflow: flatten it or use $ref")
        if isinstance(node, dict):
            enum = node.get("enum")
            if isinstance(enum, list) and len(enum) > MAX_ENUM:
                return (f"the enum at {_short(where + '/enum')} has {len(enum):,} values, over the limit of {MAX_ENUM:,}; "
                        "a string with a pattern or a smaller enum keeps testing fast")
            for key, value in node.items():
                size += len(str(key)) + 4
                stack.append((value, depth + 1, f"{where}/{_escape(key)}"))
        elif isinstance(node, list):
            size += 2 + len(node)
            stack.extend((value, depth + 1, f"{where}/{index}") for index, value in enumerate(node))
        elif isinstance(node, str):
            size += len(node) + 2
        else:
            size += 6
        if size > MAX_SCHEMA_BYTES:
            return (f"the schema is larger than {MAX_SCHEMA_BYTES:,} bytes as JSON; feeler refuses it rather than "
                    "run for minutes: split the tool or move large lists out of the schema")
    return None


def check_schema_limits(schema: Any, *, name: str | None = None) -> None:
    """Raise :class:`SchemaProblem` (reason ``over-limit``) when *schema* crosses a limit."""
    problem = schema_limit_problem(schema)
    if problem is not None:
        where = f"tool {name!r}: " if name else ""
        raise SchemaProblem(where + problem, reason="over-limit")


def _escape(key: Any) -> str:
    return str(key).replace("~", "~0").replace("/", "~1")  # RFC 6901 section 3


def _short(where: str, limit: int = 80) -> str:
    return where if len(where) <= limit else where[: limit - 3] + "..."
