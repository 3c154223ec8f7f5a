"""Limits on the schemas feeler works with, checked once before any recursive work starts.

A schema nested hundreds of levels deep makes every recursive walker (``jsonschema`` included) hit
Python's recursion limit; a multi-megabyte schema or a huge ``enum`` makes generation and diffing run
for minutes. :func:`schema_limit_problem` walks the schema *iteratively* (no recursion, so it cannot
overflow itself) and stops at the first limit crossed. Real tool schemas are far below every limit
(common practice: a few kilobytes, a handful of levels).

Counts are limited too (:data:`MAX_COUNT`): a lower bound such as ``minLength: 1e308`` or ``minItems:
1000000000`` forces every valid value to be that large, so no value can be built or sent; the input
schema is refused (:func:`count_problem`, checked by ``ToolSchema`` where it reads the keywords). An upper
bound that large is harmless to validation and is only not reached: generation treats it as absent and
builds no case on it.
"""

from __future__ import annotations

from typing import Any

from feeler.errors import SchemaProblem

__all__ = [
    "LOWER_COUNTS",
    "MAX_COUNT",
    "MAX_DEPTH",
    "MAX_ENUM",
    "MAX_SCHEMA_BYTES",
    "UPPER_COUNTS",
    "check_schema_limits",
    "count_problem",
    "over_count",
    "schema_limit_problem",
]

#: Nesting of JSON containers (objects and arrays); one schema level under ``properties`` is two.
MAX_DEPTH = 64
#: An estimate of the schema's size as JSON text (keys, strings and numbers counted).
MAX_SCHEMA_BYTES = 1024 * 1024
#: Values in one ``enum``.
MAX_ENUM = 5000
#: The largest count feeler builds a value for (characters, items, properties). Tool arguments are small
#: (common practice: a few fields, strings of at most a few thousand characters), and a value of ten
#: thousand strings or objects is already a large request; a lower count above it is refused.
MAX_COUNT = 10_000
#: Counts every valid value must reach (2020-12 validation 6.3.2, 6.4.2, 6.4.5, 6.5.2).
LOWER_COUNTS = ("minLength", "minItems", "minContains", "minProperties")
#: Counts no valid value may pass (2020-12 validation 6.3.1, 6.4.1, 6.4.4, 6.5.1).
UPPER_COUNTS = ("maxLength", "maxItems", "maxContains", "maxProperties")


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


def over_count(value: Any) -> bool:
    """Is *value* a number above :data:`MAX_COUNT` (a count feeler builds no value for)?"""
    return isinstance(value, (int, float)) and not isinstance(value, bool) and value > MAX_COUNT


def count_problem(keyword: str, value: Any) -> str | None:
    """Why lower count *keyword* = *value* cannot be met by any value feeler would build, or None."""
    if keyword not in LOWER_COUNTS or not over_count(value):
        return None
    shown = f"{value:,}" if isinstance(value, int) and value < 10**18 else f"{value:g}"
    return (f"{keyword} {shown} is over the limit of {MAX_COUNT:,}: every valid value would have to be that large, "
            "and tool arguments are small; lower the bound")


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
