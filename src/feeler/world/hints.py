"""Schema hints as values: ``default``, ``examples`` and ``const`` (source ``schema``).

JSON Schema 2020-12 validation section 9 makes ``default`` and ``examples`` annotations: they say what a
value may look like, and a validator does not check them. So each one is checked here by the oracle
against the subschema it sits in before it goes into the pool (an invalid hint is not offered), and an
``examples`` entry that breaks its own subschema is reported (:func:`bad_examples`, the catalog check
``examples_valid``). ``const`` (validation 6.1.3) is the only value its place accepts.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from typing import Any

from feeler.generate import compile_schema
from feeler.world.values import ValuePool

__all__ = ["HINT_KEYWORDS", "add_schema_hints", "bad_examples"]

HINT_KEYWORDS = ("const", "default", "examples")
#: keywords whose values are data, not subschemas: never walked into
_DATA = frozenset({"const", "enum", "default", "examples"})


def _hints(node: dict) -> Iterator[tuple[str, Any]]:
    if "const" in node:
        yield "const", node["const"]
    if "default" in node:
        yield "default", node["default"]
    if isinstance(node.get("examples"), list):
        for index, value in enumerate(node["examples"]):
            yield f"examples/{index}", value


def add_schema_hints(schema: Any, tool: str, pool: ValuePool, instances: Iterable[Any]) -> int:
    """File the valid hints of every place of *instances* (valid arguments) under that place, for *tool*.

    :returns: how many values were new in the pool.
    """
    from feeler.world.apply import branches, unique_slots

    ts = compile_schema(schema)
    added = 0
    for slot in unique_slots(ts, instances):
        for node, location in branches(ts, slot.schema, slot.location):
            for keyword, value in _hints(node):
                if ts.valid_under(slot.schema, value):
                    added += pool.add(slot.pointer, value, source="schema", provenance=f"{keyword} at {location}/{keyword}", tool=tool)
    return added


def bad_examples(schema: Any) -> list[tuple[str, Any, str]]:
    """``(keywordLocation, value, message)`` for each ``examples`` entry its own subschema refuses."""
    ts = compile_schema(schema)
    out: list[tuple[str, Any, str]] = []

    def visit(node: Any, at: str, depth: int) -> None:
        if depth > 32:
            return
        if isinstance(node, list):
            for index, item in enumerate(node):
                visit(item, f"{at}/{index}", depth + 1)
            return
        if not isinstance(node, dict):
            return
        if isinstance(node.get("examples"), list):
            for index, value in enumerate(node["examples"]):
                errors = list(ts.validator.evolve(schema=node).iter_errors(value))
                if errors:
                    out.append((f"{at}/examples/{index}", value, errors[0].message))
        for key, sub in node.items():
            if key not in _DATA:
                visit(sub, f"{at}/{key.replace('~', '~0').replace('/', '~1')}", depth + 1)

    visit(ts.schema, "", 0)
    return out
