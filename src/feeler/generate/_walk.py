"""Walk a schema and a valid instance together, yielding every place a keyword applies.

Each :class:`Site` is one schema node applied to one instance location, with two paths: the one
jsonschema reports in ``error.absolute_schema_path`` (``vpath``: no ``$ref`` or ``if`` segments, as
``Validator.descend`` builds it) and the node's real JSON Pointer in the document (``pointer``, after
following ``$ref``). ``put(value)`` returns a copy of the whole instance with this location replaced,
so a mutator only ever builds the one value it changes.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Any

from feeler.generate import _ecma
from feeler.generate._schema import ToolSchema, pointer

__all__ = ["Site", "sites"]

Path = tuple[Any, ...]


@dataclass(frozen=True)
class Site:
    """One schema node applied to one location of an instance.

    :param key_mode: the value is a property *name* (under ``propertyNames``); ``put`` renames it.
    """

    node: dict
    vpath: Path
    pointer: str
    path: Path
    value: Any
    put: Callable[[Any], Any]
    key_mode: bool = False


def _child(put: Callable[[Any], Any], container: Any, key: Any) -> Callable[[Any], Any]:
    def put_child(value: Any) -> Any:
        copy = dict(container) if isinstance(container, dict) else list(container)
        copy[key] = value
        return put(copy)

    return put_child


def _rename(put: Callable[[Any], Any], container: dict, old: str) -> Callable[[Any], Any]:
    def put_name(new: Any) -> Any:
        return put({(new if k == old else k): v for k, v in container.items()})

    return put_name


def sites(ts: ToolSchema, instance: Any) -> Iterator[Site]:
    """Every site of *ts* reached by *instance* (which should be valid, so branches can be chosen)."""
    yield from _visit(ts, ts.schema, (), "", (), instance, lambda v: v, False)


def _visit(ts: ToolSchema, node: Any, vpath: Path, at: str, path: Path, value: Any,
           put: Callable[[Any], Any], key_mode: bool) -> Iterator[Site]:  # fmt: skip
    if not isinstance(node, dict):
        return
    if isinstance(node.get("$ref"), str):
        target, target_at = ts.resolve(node["$ref"])
        # jsonschema does not add "$ref" to the schema path; neither do we.
        yield from _visit(ts, target, vpath, target_at, path, value, put, key_mode)
        if ts.ref_overrides:  # draft-07: siblings of $ref are ignored
            return
    yield Site(node, vpath, at, path, value, put, key_mode)
    if isinstance(value, dict) and not key_mode:
        props = node.get("properties") or {}
        for name, sub in props.items():
            if name in value:
                yield from _visit(ts, sub, vpath + ("properties", name), at + pointer(("properties", name)),
                                  path + (name,), value[name], _child(put, value, name), False)  # fmt: skip
        patterns = node.get("patternProperties") or {}
        for pattern, sub in patterns.items():
            for name in value:
                if _ecma.search(pattern, name):
                    yield from _visit(ts, sub, vpath + ("patternProperties", pattern),
                                      at + pointer(("patternProperties", pattern)), path + (name,), value[name],
                                      _child(put, value, name), False)  # fmt: skip
        extra = node.get("additionalProperties")
        if isinstance(extra, dict):
            for name in value:
                if name not in props and not any(_ecma.search(p, name) for p in patterns):
                    yield from _visit(ts, extra, vpath + ("additionalProperties",), at + "/additionalProperties",
                                      path + (name,), value[name], _child(put, value, name), False)  # fmt: skip
        for key in ("dependentSchemas", "dependencies"):
            for name, sub in (node.get(key) or {}).items():
                if name in value and isinstance(sub, dict):
                    yield from _visit(ts, sub, vpath + (key, name), at + pointer((key, name)), path, value, put, False)
        names = node.get("propertyNames")
        if isinstance(names, dict) and value:
            first = next(iter(value))
            yield from _visit(ts, names, vpath + ("propertyNames",), at + "/propertyNames", path, first,
                              _rename(put, value, first), True)  # fmt: skip
    if isinstance(value, list) and not key_mode:
        items = node.get("items")
        if ts.validator_class.__name__ == "Draft202012Validator":
            prefix = node.get("prefixItems") or []
            for i, sub in enumerate(prefix[: len(value)]):
                yield from _visit(ts, sub, vpath + ("prefixItems", i), at + pointer(("prefixItems", i)),
                                  path + (i,), value[i], _child(put, value, i), False)  # fmt: skip
            if isinstance(items, dict) and len(value) > len(prefix):
                i = len(prefix)  # one item stands for all: the same subschema applies to each
                yield from _visit(ts, items, vpath + ("items",), at + "/items", path + (i,), value[i],
                                  _child(put, value, i), False)  # fmt: skip
        elif isinstance(items, list):
            for i, sub in enumerate(items[: len(value)]):
                yield from _visit(ts, sub, vpath + ("items", i), at + pointer(("items", i)), path + (i,), value[i],
                                  _child(put, value, i), False)  # fmt: skip
        elif isinstance(items, dict) and value:
            yield from _visit(ts, items, vpath + ("items",), at + "/items", path + (0,), value[0],
                              _child(put, value, 0), False)  # fmt: skip
    for i, sub in enumerate(node.get("allOf") or []):
        yield from _visit(ts, sub, vpath + ("allOf", i), at + pointer(("allOf", i)), path, value, put, key_mode)
    if "if" in node:
        # jsonschema reports then/else errors under "then"/"else" with no "if" segment.
        branch = "then" if ts.valid_under(node["if"], value) else "else"
        if branch in node:
            yield from _visit(ts, node[branch], vpath + (branch,), at + "/" + branch, path, value, put, key_mode)
