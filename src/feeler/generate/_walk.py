"""Walk the compiled schema and a valid instance together, yielding every place a keyword applies.

Each :class:`Site` is one document node (:class:`~._model.Node`) applied to one instance location,
with the path ``jsonschema`` reports in ``error.absolute_schema_path`` (``vpath``: no ``$ref`` or
``if`` segments, as ``Validator.descend`` builds it) and the node's own JSON Pointer (``pointer``,
after following references, ``$id`` and ``$anchor`` included). ``put(value)`` returns a copy of the
whole instance with this location replaced, so a mutator only ever builds the one value it changes.

The walk enters every applicator: ``properties``, ``patternProperties``, ``additionalProperties``,
``dependentSchemas``/``dependencies``, ``propertyNames``, ``unevaluatedProperties``, ``prefixItems``,
``items`` (both forms), ``additionalItems``, ``unevaluatedItems``, ``allOf``, the ``anyOf``/``oneOf``
branches the value is valid under (such a site carries the combinator's location in ``branch``: a
no-go case there must be valid under no branch), and the ``then``/``else`` the value goes through.
With ``synthetic=True`` a container that has no key or item for a subschema gets one made for it
(a key the pattern matches, an extra key, a trigger property, an item past the prefix) when the whole
instance stays valid, so those subschemas are broken even when the base instance never reaches them.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Any

from feeler.generate import _ecma
from feeler.generate._build import Unbuildable, example
from feeler.generate._model import Node, model_of
from feeler.generate._regex import regex_example
from feeler.generate._schema import REF_KEYWORDS, ToolSchema

__all__ = ["Site", "Under", "sites"]

Path = tuple[Any, ...]
#: How many made-up keys or items may nest inside one another on one path.
_SYNTHETIC_NESTING = 2
#: Names tried for a made-up extra key (the first that no property or pattern claims).
_EXTRA_KEYS = ("feeler_extra", "extra", "zz")


@dataclass(frozen=True)
class Under:
    """A site inside an ``unevaluatedProperties``/``unevaluatedItems`` subschema: ``jsonschema`` reports a
    failure there as that keyword on the container, so the proof reads the subschema's own errors too."""

    keyword: str
    vpath: Path
    path: Path
    node: Node
    sub_vpath: Path
    sub_path: Path


@dataclass(frozen=True)
class Site:
    """One document node applied to one location of an instance.

    :param key_mode: the value is a property *name* (under ``propertyNames``); ``put`` renames it.
    :param branch: locations of the ``anyOf``/``oneOf`` keywords whose branch this site lies in, and of
        the ``then``/``else`` it lies in (the conditional context: a no-go case inside an ``anyOf``/``oneOf``
        branch must be valid under no branch).
    :param under: set inside an ``unevaluated*`` subschema (see :class:`Under`).
    """

    node: Node
    vpath: Path
    path: Path
    value: Any
    put: Callable[[Any], Any]
    key_mode: bool = False
    branch: tuple[str, ...] = ()
    under: Under | None = None

    @property
    def pointer(self) -> str:
        """The node's JSON Pointer in the document."""
        return self.node.at

    @property
    def kw(self) -> dict[str, Any]:
        """The node's own keywords (counts normalised)."""
        return self.node.kw


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


def sites(ts: ToolSchema, instance: Any, *, synthetic: bool = False) -> Iterator[Site]:
    """Every site of *ts* reached by *instance* (which should be valid, so branches can be chosen)."""
    walker = _Walker(ts, synthetic)
    yield from walker.visit(model_of(ts).root, (), (), instance, lambda v: v, False, (), None, 0)


class _Walker:
    def __init__(self, ts: ToolSchema, synthetic: bool) -> None:
        self.ts, self.synthetic, self.model = ts, synthetic, model_of(ts)
        self.draft2020 = ts.validator_class.__name__ == "Draft202012Validator"

    def visit(self, node: Node | None, vpath: Path, path: Path, value: Any, put: Callable[[Any], Any], key_mode: bool,
              branch: tuple[str, ...], under: Under | None, made: int) -> Iterator[Site]:  # fmt: skip
        if node is None or not isinstance(node.raw, dict):
            return
        for keyword in REF_KEYWORDS:
            target = node.target(keyword, uncut=True)
            if target is not None:
                # jsonschema does not add "$ref" to the schema path; it does add "$dynamicRef"/"$recursiveRef".
                sub = vpath if keyword == "$ref" else vpath + (keyword,)
                yield from self.visit(target, sub, path, value, put, key_mode, branch, under, made)
        if self.ts.ref_overrides and "$ref" in node.kw:  # draft-07: siblings of $ref are ignored
            return
        yield Site(node, vpath, path, value, put, key_mode, branch, under)
        args = (branch, under)
        if isinstance(value, dict) and not key_mode:
            yield from self._object(node, vpath, path, value, put, args, made)
        if isinstance(value, list) and not key_mode:
            yield from self._array(node, vpath, path, value, put, args, made)
        for i, sub in node.children("allOf"):
            yield from self.visit(sub, vpath + ("allOf", i), path, value, put, key_mode, branch, under, made)
        for keyword in ("anyOf", "oneOf"):
            for i, sub in node.children(keyword):
                if self.ts.valid_under(sub.raw, value):
                    yield from self.visit(sub, vpath + (keyword, i), path, value, put, key_mode,
                                          branch + (node.at + "/" + keyword,), under, made)  # fmt: skip
        if "if" in node.kw:
            # jsonschema reports then/else errors under "then"/"else" with no "if" segment.
            outcome = "then" if self.ts.valid_under(node.kw["if"], value) else "else"
            yield from self.visit(node.child(outcome), vpath + (outcome,), path, value, put, key_mode,
                                  branch + (node.at + "/" + outcome,), under, made)  # fmt: skip

    # -- objects ------------------------------------------------------------------------------------------
    def _made_key(self, node: Node, value: dict, put: Callable[[Any], Any], key: str | None) -> tuple[dict, Any] | None:
        """*value* with a made-up *key* (a valid value under it), if the whole instance stays valid."""
        if key is None or key in value:
            return None
        try:
            made = example(self.model.shape_of(node).for_key(key))
        except Unbuildable:
            return None
        grown = {**value, key: made}
        return (grown, made) if self.ts.is_valid(put(grown)) else None

    def _extra_keys(self, node: Node, claimed: Any, patterns: list[str]) -> list[str]:
        """Names for a made-up key that no property or pattern claims (a propertyNames example first)."""
        names = self.model.shape_of(node).names
        first: list[str] = []
        if names is not None:
            try:
                made = example(names)
                first = [made] if isinstance(made, str) else []
            except Unbuildable:
                pass
        return [k for k in (*first, *_EXTRA_KEYS) if k not in claimed and not any(_ecma.search(p, k) for p in patterns)][:3]

    def _object(self, node: Node, vpath: Path, path: Path, value: dict, put: Callable[[Any], Any],
                args: tuple[Any, Any], made: int) -> Iterator[Site]:  # fmt: skip
        branch, under = args
        props = node.kw.get("properties") or {}
        patterns = [p for p, _ in node.children("patternProperties")]
        can_make = self.synthetic and made < _SYNTHETIC_NESTING

        def into(sub: Node | None, sub_vpath: Path, name: str, holder: dict, inner: Under | None, depth: int) -> Iterator[Site]:
            yield from self.visit(sub, sub_vpath, path + (name,), holder[name], _child(put, holder, name), False, branch, inner, depth)

        for name, sub in node.children("properties"):
            if name in value:
                yield from into(sub, vpath + ("properties", name), name, value, under, made)
        for pattern, sub in node.children("patternProperties"):
            names = [n for n in value if _ecma.search(pattern, n)]
            for name in names:
                yield from into(sub, vpath + ("patternProperties", pattern), name, value, under, made)
            if not names and can_make:
                key = regex_example(pattern)
                grown = self._made_key(node, value, put, key if key not in props else None)
                if grown is not None:
                    yield from into(sub, vpath + ("patternProperties", pattern), key, grown[0], under, made + 1)  # type: ignore[arg-type]
        extra = node.child("additionalProperties")
        if extra is not None and isinstance(extra.raw, dict):
            names = [n for n in value if n not in props and not any(_ecma.search(p, n) for p in patterns)]
            for name in names:
                yield from into(extra, vpath + ("additionalProperties",), name, value, under, made)
            if not names and can_make:
                for key in self._extra_keys(node, props, patterns):
                    grown = self._made_key(node, value, put, key)
                    if grown is not None:
                        yield from into(extra, vpath + ("additionalProperties",), key, grown[0], under, made + 1)
                        break
        for keyword in ("dependentSchemas", "dependencies"):
            for name, sub in node.children(keyword):
                if not isinstance(sub.raw, dict):
                    continue
                if name in value:
                    yield from self.visit(sub, vpath + (keyword, name), path, value, put, False, branch, under, made)
                elif can_make:
                    grown = self._made_key(node, value, put, name)
                    if grown is not None:
                        yield from self.visit(sub, vpath + (keyword, name), path, grown[0], put, False, branch, under, made + 1)
        names_node = node.child("propertyNames")
        if names_node is not None and isinstance(names_node.raw, dict) and value:
            first = next(iter(value))
            yield from self.visit(names_node, vpath + ("propertyNames",), path, first, _rename(put, value, first), True,
                                  branch, under, made)  # fmt: skip
        rest = node.child("unevaluatedProperties")
        if rest is not None and isinstance(rest.raw, dict):
            shape = self.model.shape_of(node)
            if any("additionalProperties" in p.kw for p in shape.parts):
                return  # every other key is evaluated by additionalProperties (2020-12 core 11.3)
            claimed = set(shape.declared)
            names = [n for n in value if n not in claimed and not any(_ecma.search(p, n) for p in shape.pattern_keys)]
            holder, depth = value, made
            if not names and can_make:
                for key in self._extra_keys(node, claimed, shape.pattern_keys):
                    grown = self._made_key(node, value, put, key)
                    if grown is not None:
                        holder, names, depth = grown[0], [key], made + 1
                        break
            for name in names[:1]:
                inner = Under("unevaluatedProperties", vpath, path, rest, vpath + ("unevaluatedProperties",), path + (name,))
                yield from into(rest, vpath + ("unevaluatedProperties",), name, holder, inner, depth)

    # -- arrays -------------------------------------------------------------------------------------------
    def _array(self, node: Node, vpath: Path, path: Path, value: list, put: Callable[[Any], Any],
               args: tuple[Any, Any], made: int) -> Iterator[Site]:  # fmt: skip
        branch, under = args
        can_make = self.synthetic and made < _SYNTHETIC_NESTING

        def into(sub: Node, sub_vpath: Path, i: int, holder: list, inner: Under | None, depth: int) -> Iterator[Site]:
            yield from self.visit(sub, sub_vpath, path + (i,), holder[i], _child(put, holder, i), False, branch, inner, depth)

        def past(start: int, sub: Node, sub_vpath: Path, inner_for: Callable[[int], Under | None]) -> Iterator[Site]:
            # One item stands for all: the same subschema applies to each.
            if len(value) > start:
                yield from into(sub, sub_vpath, start, value, inner_for(start), made)
            elif can_make and len(value) == start:
                try:
                    item = example(self.model.shape_of(sub))
                except Unbuildable:
                    return
                grown = [*value, item]
                if self.ts.is_valid(put(grown)):
                    yield from into(sub, sub_vpath, start, grown, inner_for(start), made + 1)

        items = node.child("items")
        if self.draft2020:
            prefix = node.children("prefixItems")
            for i, sub in prefix[: len(value)]:
                yield from into(sub, vpath + ("prefixItems", i), i, value, under, made)
            if items is not None and isinstance(items.raw, dict):
                yield from past(len(prefix), items, vpath + ("items",), lambda i: under)
            evaluated = len(prefix) if items is None else None
        elif isinstance(node.kw.get("items"), list):
            tuple_items = node.children("items")
            for i, sub in tuple_items[: len(value)]:
                yield from into(sub, vpath + ("items", i), i, value, under, made)
            more = node.child("additionalItems")
            if more is not None and isinstance(more.raw, dict):
                yield from past(len(tuple_items), more, vpath + ("additionalItems",), lambda i: under)
            evaluated = len(tuple_items) if more is None else None
        else:
            if items is not None and isinstance(items.raw, dict):
                yield from past(0, items, vpath + ("items",), lambda i: under)
            evaluated = 0 if items is None else None
        rest = node.child("unevaluatedItems")
        if rest is not None and isinstance(rest.raw, dict) and evaluated is not None and not node.children("allOf"):
            sub_vpath = vpath + ("unevaluatedItems",)
            yield from past(evaluated, rest, sub_vpath, lambda i: Under("unevaluatedItems", vpath, path, rest, sub_vpath, path + (i,)))
