"""The one compiled form every generator reads: typed, normalised nodes with references followed.

Two layers, built lazily and cached on the :class:`Model` (one per :class:`~._schema.ToolSchema`):

* :class:`Node` - one node of the document at one recursion level: its own keywords with the counts
  normalised (``maxLength: 2.0`` is the integer 2, JSON Schema 2020-12 validation 6.3-6.5 accept any
  integer-valued number), its location (a JSON Pointer), the ``referencing`` resolver in force there,
  and its subschemas and reference targets as nodes. A reference that recurses raises the level; past
  the ``recursion_depth`` setting the target is *cut*: generation does not go deeper (validation does).
  The walker (:mod:`._walk`), the mutators and the boundary producers read nodes: a keyword is broken
  or hit where it is written.
* :class:`Shape` - what a value at one place must satisfy: the nodes that apply there merged
  (``$ref`` targets and ``allOf`` parts folded in; bounds, lengths, counts, required names, property
  and item schemas intersected), typed (``types``), with the combinators (``anyOf``, ``oneOf``,
  ``not``, ``if``) kept for the generators to choose from. ``exact`` says whether a value built from
  the merged keywords is valid by construction; where it is not, generators keep only what
  :meth:`Shape.accepts` (the oracle on every merged node) accepts. The samplers (:mod:`._fast`), the
  hypothesis strategies (:mod:`._strategies`) and the builders (:mod:`._build`) read shapes.

:func:`compile_schema` makes a :class:`~._schema.ToolSchema`, its model, and refuses an unsatisfiable
schema with a :class:`~feeler.errors.SchemaProblem` (reason ``unsatisfiable``) that names the
contradiction and where it sits (:func:`contradiction`).
"""

from __future__ import annotations

import functools
import json
import math
from collections.abc import Iterable
from typing import Any

from feeler._json import canonical_dumps
from feeler._limits import LOWER_COUNTS, UPPER_COUNTS, check_schema_limits, over_count
from feeler.errors import SchemaProblem
from feeler.generate import _ecma
from feeler.generate._schema import DEFAULT_RECURSION_DEPTH, REF_KEYWORDS, ToolSchema, pointer

__all__ = ["COUNTS", "TYPES", "Model", "Node", "Shape", "compile_schema", "contradiction", "model_of"]

TYPES = ("null", "boolean", "integer", "number", "string", "array", "object")
#: Keywords whose value is a count: an integer-valued number (2.0) means that integer.
COUNTS = LOWER_COUNTS + UPPER_COUNTS
#: Keywords that constrain nothing (2020-12 core section 8, validation section 9) or only hold subschemas.
ANNOTATIONS = frozenset({
    "title", "description", "default", "examples", "$comment", "deprecated", "readOnly", "writeOnly",
    "$schema", "$id", "$anchor", "$dynamicAnchor", "$recursiveAnchor", "$defs", "definitions", "$vocabulary",
    "contentMediaType", "contentEncoding", "contentSchema",
})  # fmt: skip
#: Keywords a value built from the merged keywords satisfies by construction (see :attr:`Shape.exact`).
_EXACT = ANNOTATIONS | {
    "type", "const", "enum", "minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum", "multipleOf",
    "minLength", "maxLength", "pattern", "format", "items", "prefixItems", "additionalItems", "minItems",
    "maxItems", "uniqueItems", "properties", "required", "additionalProperties", "patternProperties",
    "minProperties", "maxProperties", "dependentRequired", "dependencies", "$ref", "allOf",
}  # fmt: skip
#: Formats the samplers make (others are drawn as plain strings and filtered by the oracle).
EXACT_FORMATS = frozenset({"date", "time", "date-time", "email", "idn-email", "uri", "iri", "uri-reference",
                           "iri-reference", "uuid", "ipv4", "ipv6", "hostname", "idn-hostname"})  # fmt: skip


def _normalised(raw: dict) -> dict:
    out = dict(raw)
    for key in COUNTS:
        value = out.get(key)
        if isinstance(value, float) and value.is_integer():
            out[key] = int(value)
    return out


class Node:
    """One document node at one recursion level (see the module docstring).

    :param raw: the node as written (a dict or a boolean).
    :param at: its JSON Pointer in the document.
    :param level: how many recursive references were followed to reach it.
    :param cut: past the recursion depth: generation treats it as accepting nothing.
    """

    __slots__ = ("model", "raw", "at", "level", "cut", "kw", "resolver", "_kids")

    def __init__(self, model: Model, raw: Any, at: str, level: int, resolver: Any, cut: bool = False) -> None:
        self.model, self.raw, self.at, self.level, self.cut, self.resolver = model, raw, at, level, cut, resolver
        #: the node's own keywords, counts normalised
        self.kw: dict[str, Any] = _normalised(raw) if isinstance(raw, dict) else {}
        self._kids: dict[tuple[Any, ...], Node | None] = {}

    def __repr__(self) -> str:
        return f"Node({self.at or '#'}, level={self.level}{', cut' if self.cut else ''})"

    def child(self, *rel: Any) -> Node | None:
        """The subschema at *rel* below this node (``("properties", "a")``, ``("items",)``), or None."""
        if rel in self._kids:
            return self._kids[rel]
        sub: Any = self.raw
        for part in rel:
            try:
                sub = sub[part]
            except (KeyError, IndexError, TypeError):
                sub = None
                break
        node = None
        if isinstance(sub, (dict, bool)):
            resolver = self.model.ts.resolver_for(sub) if isinstance(sub, dict) else self.resolver
            node = self.model.node(sub, self.at + pointer(rel), self.level, resolver)
        self._kids[rel] = node
        return node

    def children(self, keyword: str) -> list[tuple[Any, Node]]:
        """``(key, node)`` for each subschema of a list or map *keyword* (``anyOf``, ``properties``...)."""
        value = self.kw.get(keyword)
        keys = range(len(value)) if isinstance(value, list) else list(value) if isinstance(value, dict) else []
        return [(k, n) for k in keys if (n := self.child(keyword, k)) is not None]

    def target(self, keyword: str = "$ref", uncut: bool = False) -> Node | None:
        """The node *keyword* (``$ref``, ``$dynamicRef``, ``$recursiveRef``) points at, or None.

        A recursive reference raises the level; past the recursion depth the target is cut, unless
        *uncut* (the walker, which follows a finite instance, asks for the deepest level instead).
        """
        ref = self.kw.get(keyword)
        if not isinstance(ref, str):
            return None
        key = ("->", keyword, uncut)
        if key not in self._kids:
            ts = self.model.ts
            contents, at, resolver = ts.lookup(ref, self.resolver, keyword)
            level = self.level + (self.at + pointer((keyword,)) in ts.recursive_refs)
            cut = level > ts.recursion_depth
            if uncut:
                level, cut = min(level, ts.recursion_depth), False
            self._kids[key] = self.model.node(contents, at, level, resolver, cut)
        return self._kids[key]


def _types_of(kw: dict) -> set[str] | None:
    declared = kw.get("type")
    if declared is None:
        return None
    types = {declared} if isinstance(declared, str) else set(declared)
    if "number" in types:
        types.add("integer")
    return types


def _inferred(keywords: Iterable[str]) -> list[str]:
    """The types a node without ``type`` is built as, from its keywords (any type is allowed)."""
    keys = set(keywords)
    if keys & {"properties", "required", "additionalProperties", "patternProperties", "minProperties",
               "maxProperties", "propertyNames", "dependentRequired", "dependentSchemas", "dependencies",
               "unevaluatedProperties"}:  # fmt: skip
        return ["object"]
    if keys & {"items", "prefixItems", "minItems", "maxItems", "uniqueItems", "contains", "additionalItems", "unevaluatedItems"}:
        return ["array"]
    if keys & {"minLength", "maxLength", "pattern", "format"}:
        return ["string"]
    if keys & {"minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum", "multipleOf"}:
        return ["number"]
    return list(TYPES)


def _count(keyword: str, lower: bool) -> Any:
    """A cached property of :class:`Shape`: the tightest *keyword* count among its parts."""

    def tightest(shape: Shape) -> int | None:
        if lower:
            return shape._most(keyword)
        high = shape._least(keyword)
        return None if over_count(high) else high  # feeler._limits: a bound no value feeler builds comes near

    tightest.__doc__ = (f"The tightest {keyword} among the parts ({'0' if lower else 'None'} when none sets it"
                        f"{'' if lower else ' or it is over feeler._limits.MAX_COUNT'}).")
    return functools.cached_property(tightest)


class Shape:
    """What a value at one place must satisfy: the merge of *parts* (see the module docstring).

    :param skip: locations of combinators already resolved by the generator that made this shape
        (a chosen ``anyOf`` branch, an ``if`` outcome), so they are not offered again.
    """

    def __init__(self, model: Model, parts: tuple[Node, ...], skip: frozenset[str], cut: bool, dynamic: bool) -> None:
        self.model, self.parts, self.skip, self.cut, self.dynamic = model, parts, skip, cut, dynamic

    def __repr__(self) -> str:
        return f"Shape({', '.join(p.at or '#' for p in self.parts) or 'true'})"

    # -- the parts ------------------------------------------------------------------------------------
    def _all(self, keyword: str) -> list[tuple[Node, Any]]:
        return [(p, p.kw[keyword]) for p in self.parts if keyword in p.kw]

    def _most(self, keyword: str) -> int:
        """The largest lower count among the parts (0 when none sets *keyword*)."""
        return max([v for _, v in self._all(keyword)] or [0])

    def _least(self, keyword: str) -> int | None:
        """The smallest upper count among the parts (None when none sets *keyword*)."""
        return min([v for _, v in self._all(keyword)], default=None)

    @functools.cached_property
    def keywords(self) -> frozenset[str]:
        """Every keyword of every part."""
        return frozenset(k for p in self.parts for k in p.kw)

    @functools.cached_property
    def never(self) -> bool:
        """Generation cannot make a value here: a ``false`` part, a cut recursion, or no common type."""
        return self.cut or any(p.raw is False for p in self.parts) or not self.types

    @functools.cached_property
    def types(self) -> tuple[str, ...]:
        """The JSON types a value here may have (inferred from the keywords when no part declares ``type``)."""
        if any(_types_of(p.kw) is not None for p in self.parts):
            return self.declared_types
        allowed = set(_inferred(self.keywords))
        return tuple(t for t in TYPES if t in allowed)

    @functools.cached_property
    def declared_types(self) -> tuple[str, ...]:
        """The types the parts' ``type`` keywords allow (every type when none declares one)."""
        declared = [t for p in self.parts if (t := _types_of(p.kw)) is not None]
        allowed = set.intersection(*declared) if declared else set(TYPES)
        return tuple(t for t in TYPES if t in allowed)

    def accepts(self, value: Any) -> bool:
        """The oracle on every part: is *value* valid here?"""
        ts = self.model.ts
        return all(ts.valid_under(p.raw, value) for p in self.parts)

    # -- const and enum ---------------------------------------------------------------------------------
    @functools.cached_property
    def listed(self) -> list[Any] | None:
        """The values ``const``/``enum`` list here, intersected across parts (None: no such keyword)."""
        lists = [[v] for _, v in self._all("const")] + [list(v) for _, v in self._all("enum") if isinstance(v, list)]
        if not lists:
            return None
        keys = [set(map(canonical_dumps, values)) for values in lists[1:]]
        return [v for v in lists[0] if all(canonical_dumps(v) in k for k in keys)]

    @functools.cached_property
    def members(self) -> list[Any] | None:
        """The listed values the whole shape accepts (None: no ``const``/``enum`` here)."""
        return None if self.listed is None else [v for v in self.listed if self.accepts(v)]

    # -- numbers ----------------------------------------------------------------------------------------
    def bound(self, side: str, integer: bool) -> tuple[float | None, str | None]:
        """``(the tightest bound, where it is written)`` on *side* (``"low"``/``"high"``); None when open.

        Integers get the nearest integer inside an exclusive or fractional bound.
        """
        keys = ("minimum", "exclusiveMinimum") if side == "low" else ("maximum", "exclusiveMaximum")
        best: tuple[float, bool, str] | None = None
        for key in keys:
            for part, value in self._all(key):
                if isinstance(value, bool) or not isinstance(value, (int, float)):
                    continue
                exclusive = key.startswith("exclusive")
                at = part.at + pointer((key,))
                if best is None:
                    best = (value, exclusive, at)
                    continue
                tighter = value > best[0] or (value == best[0] and exclusive) if side == "low" else (
                    value < best[0] or (value == best[0] and exclusive))
                if tighter:
                    best = (value, exclusive, at)
        if best is None:
            return None, None
        value, exclusive, at = best
        if integer:
            if side == "low":
                return (math.floor(value) + 1 if exclusive else math.ceil(value)), at
            return (math.ceil(value) - 1 if exclusive else math.floor(value)), at
        if exclusive:
            return math.nextafter(value, math.inf if side == "low" else -math.inf), at
        return value, at

    @functools.cached_property
    def steps(self) -> list[Any]:
        """Every ``multipleOf`` here."""
        return [v for _, v in self._all("multipleOf")]

    # -- strings ----------------------------------------------------------------------------------------
    min_length = _count("minLength", True)

    max_length = _count("maxLength", False)

    @functools.cached_property
    def patterns(self) -> list[str]:
        return [v for _, v in self._all("pattern")]

    @functools.cached_property
    def formats(self) -> list[str]:
        return [v for _, v in self._all("format")]

    # -- arrays -----------------------------------------------------------------------------------------
    def _tuple_of(self, part: Node) -> tuple[list[Node], Node | None]:
        """*part*'s positional item nodes and the node for the items past them (None: anything)."""
        items = part.kw.get("items")
        # Past the positional items and any "items"/"additionalItems", "unevaluatedItems" takes the rest
        # (2020-12 core 11.2; where an applicator of another part evaluates them, the oracle filter decides).
        later = part.child("unevaluatedItems")
        if self.model.ts.validator_class.__name__ == "Draft202012Validator":
            prefix = [n for _, n in part.children("prefixItems")]
            return prefix, part.child("items") or later
        if isinstance(items, list):
            return [n for _, n in part.children("items")], part.child("additionalItems") or later
        return [], part.child("items") or later

    @functools.cached_property
    def prefix(self) -> list[Shape]:
        """The merged shape of each positional item."""
        tuples = [self._tuple_of(p) for p in self.parts]
        length = max([len(prefix) for prefix, _ in tuples] or [0])
        out = []
        for i in range(length):
            nodes = [prefix[i] if i < len(prefix) else rest for prefix, rest in tuples]
            out.append(self.model.shape([n for n in nodes if n is not None]))
        return out

    @functools.cached_property
    def rest(self) -> Shape:
        """The merged shape of the items past :attr:`prefix`."""
        return self.model.shape([rest for _, rest in (self._tuple_of(p) for p in self.parts) if rest is not None])

    def item(self, index: int) -> Shape:
        """The shape of the item at *index*."""
        return self.prefix[index] if index < len(self.prefix) else self.rest

    min_items = _count("minItems", True)

    max_items = _count("maxItems", False)

    @functools.cached_property
    def unique(self) -> bool:
        return any(v is True for _, v in self._all("uniqueItems"))

    @functools.cached_property
    def contains(self) -> list[tuple[Shape, int, int | None]]:
        """``(shape, minContains, maxContains)`` for every ``contains`` here."""
        out = []
        for part in self.parts:
            node = part.child("contains")
            if node is not None:
                low = part.kw.get("minContains", 1)
                high = part.kw.get("maxContains")
                out.append((self.model.shape([node]), low, None if over_count(high) else high))
        return out

    # -- objects ----------------------------------------------------------------------------------------
    @functools.cached_property
    def declared(self) -> list[str]:
        """Property names any part declares in ``properties``, in order."""
        return list(dict.fromkeys(name for p in self.parts for name in (p.kw.get("properties") or {})))

    @functools.cached_property
    def required(self) -> list[str]:
        return list(dict.fromkeys(name for _, names in self._all("required") if isinstance(names, list) for name in names))

    def for_key(self, name: str) -> Shape:
        """The merged shape of the value under key *name* (``properties``, matching ``patternProperties``,
        else ``additionalProperties``, per part; 2020-12 core 10.3.2)."""
        cache: dict[str, Shape] = self.__dict__.setdefault("_for_key", {})
        if name not in cache:
            nodes: list[Node] = []
            for part in self.parts:
                if name in (part.kw.get("properties") or {}):
                    nodes.append(part.child("properties", name))  # type: ignore[arg-type]
                    continue
                matched = [n for p, n in part.children("patternProperties") if _ecma.search(p, name)]
                nodes.extend(matched)
                extra = part.child("additionalProperties")
                later = part.child("unevaluatedProperties")
                if not matched and extra is None and later is not None and isinstance(later.raw, dict):
                    extra = later  # 2020-12 core 11.3 (approximate: another part may evaluate the key; filtered)
                if not matched and extra is not None:
                    nodes.append(extra)
            cache[name] = self.model.shape(nodes)
        return cache[name]

    @functools.cached_property
    def pattern_keys(self) -> list[str]:
        """Every ``patternProperties`` regular expression here."""
        return [p for part in self.parts for p, _ in part.children("patternProperties")]

    @functools.cached_property
    def extra(self) -> Shape | None:
        """The shape of a key no part declares or matches by pattern (None: no such key is allowed)."""
        nodes = [n for p in self.parts if (n := p.child("additionalProperties")) is not None]
        shape = self.model.shape(nodes)
        return None if shape.never else shape

    @functools.cached_property
    def names(self) -> Shape | None:
        """The merged ``propertyNames`` shape (None: any name)."""
        nodes = [n for p in self.parts if (n := p.child("propertyNames")) is not None]
        return self.model.shape(nodes) if nodes else None

    min_props = _count("minProperties", True)

    max_props = _count("maxProperties", False)

    @functools.cached_property
    def depends(self) -> dict[str, list[str]]:
        """``dependentRequired`` and the list form of draft-07 ``dependencies``, merged."""
        out: dict[str, list[str]] = {}
        for key in ("dependentRequired", "dependencies"):
            for _, mapping in self._all(key):
                for trigger, needs in (mapping or {}).items():
                    if isinstance(needs, list):
                        out[trigger] = list(dict.fromkeys([*out.get(trigger, []), *needs]))
        return out

    @functools.cached_property
    def dependent_schemas(self) -> dict[str, Shape]:
        """``dependentSchemas`` and the schema form of draft-07 ``dependencies``, merged per trigger."""
        nodes: dict[str, list[Node]] = {}
        for part in self.parts:
            for key in ("dependentSchemas", "dependencies"):
                for trigger, node in part.children(key):
                    if isinstance(part.kw[key][trigger], (dict, bool)):
                        nodes.setdefault(trigger, []).append(node)
        return {trigger: self.model.shape(ns) for trigger, ns in nodes.items()}

    # -- combinators ------------------------------------------------------------------------------------
    def groups(self, keyword: str) -> list[tuple[str, list[Node]]]:
        """``(location, branch nodes)`` for each ``anyOf``/``oneOf`` here not yet resolved."""
        return [(p.at + pointer((keyword,)), [n for _, n in p.children(keyword)]) for p in self.parts
                if keyword in p.kw and p.at + pointer((keyword,)) not in self.skip]  # fmt: skip

    @functools.cached_property
    def conditionals(self) -> list[tuple[str, Node, Node | None, Node | None]]:
        """``(location, if, then, else)`` for each ``if`` here not yet resolved."""
        out = []
        for p in self.parts:
            at = p.at + "/if"
            if "if" in p.kw and at not in self.skip:
                out.append((at, p.child("if"), p.child("then"), p.child("else")))
        return out  # type: ignore[return-value]

    def choose(self, location: str, *nodes: Node | None) -> Shape:
        """This shape with the combinator at *location* resolved by merging *nodes* in."""
        return self.model.shape([*self.parts, *(n for n in nodes if n is not None)], self.skip | {location}, self.cut)

    def merge(self, *others: Shape) -> Shape:
        """The intersection of this shape and *others*."""
        return self.model.shape([*self.parts, *(p for o in others for p in o.parts)], self.skip.union(*(o.skip for o in others)),
                                self.cut or any(o.cut for o in others))  # fmt: skip

    @functools.cached_property
    def exact(self) -> bool:
        """A value built from the merged keywords (types, bounds, lengths, one pattern or one known format,
        items, properties, counts) is valid here by construction; otherwise generators filter with
        :meth:`accepts`."""
        if self.dynamic or self.keywords - _EXACT or self.groups("anyOf") or self.groups("oneOf"):
            return False
        if self.dependent_schemas:  # draft-07 "dependencies" in its schema form
            return False
        if len(self.patterns) + len(self.formats) > 1 or any(f not in EXACT_FORMATS for f in self.formats):
            return False
        if self.formats and ("minLength" in self.keywords or "maxLength" in self.keywords):
            return False
        if len(self.steps) > 1 or (self.steps and not float(self.steps[0]).is_integer()):
            return False
        return self.listed is None or len(self._all("const")) + len(self._all("enum")) == 1


class Model:
    """The compiled form of one :class:`~._schema.ToolSchema` (see the module docstring)."""

    def __init__(self, ts: ToolSchema) -> None:
        self.ts = ts
        self._nodes: dict[tuple[str, int, bool], Node] = {}
        self._shapes: dict[tuple[Any, ...], Shape] = {}
        self.root = self.node(ts.schema, "", 0, ts.root_resolver)
        self.true = self.shape([])

    def node(self, raw: Any, at: str, level: int, resolver: Any, cut: bool = False) -> Node:
        """The node for *raw* at *at* and *level* (one object per place and level)."""
        key = (at, level, cut)
        found = self._nodes.get(key)
        if found is None:
            found = self._nodes[key] = Node(self, raw, at, level, resolver, cut)
        return found

    def shape(self, nodes: Iterable[Node], skip: frozenset[str] = frozenset(), cut: bool = False) -> Shape:
        """The merged shape of *nodes*: references followed (draft-07: the target replaces the node),
        ``allOf`` parts folded in."""
        parts: list[Node] = []
        seen: set[int] = set()
        dynamic = False
        todo = list(nodes)
        while todo:  # bounded: each node (place and level) is taken once, and levels stop at the cut
            node = todo.pop(0)
            if id(node) in seen:
                continue
            seen.add(id(node))
            if node.cut:
                cut = True
                continue
            if node.raw is True or node.raw == {}:
                continue
            targets = [(k, t) for k in REF_KEYWORDS if (t := node.target(k)) is not None]
            dynamic = dynamic or any(k != "$ref" for k, _ in targets)
            if not (self.ts.ref_overrides and "$ref" in node.kw):
                parts.append(node)
                todo.extend(n for _, n in node.children("allOf"))
            todo.extend(t for _, t in targets)
        key = (tuple(sorted(id(p) for p in parts)), skip, cut)
        found = self._shapes.get(key)
        if found is None:
            # The key's ids stay valid: the nodes live as long as the model (self._nodes).
            found = self._shapes[key] = Shape(self, tuple(parts), skip, cut, dynamic)
        return found

    def shape_of(self, node: Node) -> Shape:
        """The merged shape of one node."""
        return self.shape([node])

    @property
    def root_shape(self) -> Shape:
        return self.shape([self.root])


def model_of(ts: ToolSchema) -> Model:
    """The model of *ts* (built once and kept on it)."""
    model = ts.__dict__.get("_model")
    if model is None:
        model = ts.__dict__["_model"] = Model(ts)
    return model


# -- unsatisfiable schemas -----------------------------------------------------------------------------


def _at(location: str | None) -> str:
    return location if location else "the root"


def _first_error(ts: ToolSchema, shape: Shape, value: Any) -> str:
    for part in shape.parts:
        for error in ts.validator_for(part.raw).iter_errors(value):
            return f"{error.validator} at {_at(part.at + pointer(tuple(error.relative_schema_path)))}"
    return "the schema"


def _crossed(shape: Shape, low_keyword: str, high_keyword: str) -> str | None:
    """``lowKeyword N at ... is above highKeyword M at ...`` when the tightest pair of counts crosses."""
    low, high = shape._most(low_keyword), shape._least(high_keyword)
    if high is None or low <= high:
        return None
    low_at = next(p.at for p, v in shape._all(low_keyword) if v == low) + "/" + low_keyword
    high_at = next(p.at for p, v in shape._all(high_keyword) if v == high) + "/" + high_keyword
    return f"{low_keyword} {low} at {low_at} is above {high_keyword} {high} at {high_at}"


def _type_problem(shape: Shape, kind: str, seen: set[int]) -> str | None:
    """Why no value of JSON type *kind* satisfies *shape*, or None."""
    if kind in ("integer", "number"):
        integer = kind == "integer"
        low, low_at = shape.bound("low", integer)
        high, high_at = shape.bound("high", integer)
        if low is not None and high is not None and low > high:
            what = "no integer lies between" if integer else "no number lies between"
            return f"{what} the lower bound at {_at(low_at)} and the upper bound at {_at(high_at)}"
        if integer and low is not None and high is not None and shape.steps and all(float(s).is_integer() for s in shape.steps):
            step = math.lcm(*(int(s) for s in shape.steps))
            if step and math.ceil(low / step) * step > high:
                return f"no multiple of {step} (multipleOf) lies between the bounds at {_at(low_at)} and {_at(high_at)}"
        return None
    if kind == "string":
        return _crossed(shape, "minLength", "maxLength")
    if kind == "array":
        crossed = _crossed(shape, "minItems", "maxItems") or _crossed(shape, "minContains", "maxContains")
        if crossed:
            return crossed
        high = shape.max_items
        for contained, low_c, _ in shape.contains:
            if high is not None and low_c > high:
                return f"contains needs {low_c} matching items (minContains) but maxItems is {high} ({shape})"
            if low_c > 0:
                inner = _why(contained, seen)
                if inner:
                    return f"contains needs {low_c} matching item(s) but its subschema accepts nothing: {inner}"
        for index in range(shape.min_items):
            item = shape.item(index)
            inner = _why(item, seen)
            if inner:
                return f"item {index} is needed (minItems {shape.min_items}) but accepts nothing: {inner}"
        return None
    if kind == "object":
        crossed = _crossed(shape, "minProperties", "maxProperties")
        if crossed:
            return crossed
        high = shape.max_props
        if high is not None and len(shape.required) > high:
            return f"{len(shape.required)} required properties but maxProperties {high} ({shape})"
        for name in shape.required:
            value = shape.for_key(name)
            where = next((p.at + "/required" for p, names in shape._all("required") if name in names), "")
            if any(p.raw is False and p.at.endswith("/additionalProperties") for p in value.parts):
                forbidding = next(p.at for p in value.parts if p.raw is False)
                return f"required property {name!r} (at {_at(where)}) is forbidden by additionalProperties false at {forbidding}"
            inner = _why(value, seen)
            if inner:
                return f"required property {name!r} (at {_at(where)}) accepts no value: {inner}"
        return None
    return None


def _why(shape: Shape, seen: set[int]) -> str | None:
    """Why *shape* accepts no value (a contradiction the keywords show), or None when none is seen."""
    if shape.cut or id(shape) in seen or not shape.parts:
        return None
    if any(p.at.endswith(("/unevaluatedProperties", "/unevaluatedItems")) for p in shape.parts):
        return None  # which keys or items reach these depends on the value's other annotations: not judged here
    seen.add(id(shape))
    ts = shape.model.ts
    for part in shape.parts:
        if part.raw is False:
            return f"the schema at {_at(part.at)} is false"
    if not shape.declared_types:
        written = ", ".join(f"{p.kw['type']!r} at {_at(p.at + '/type')}" for p, _ in shape._all("type"))
        return f"the types share no value ({written})"
    if shape.listed is not None:
        if not shape.listed:
            where = ", ".join(_at(p.at + "/" + k) for k in ("const", "enum") for p, _ in shape._all(k))
            return f"const/enum leave no value in common ({where})"
        if not shape.members:
            reasons = "; ".join(f"{json.dumps(v, sort_keys=True)} fails {_first_error(ts, shape, v)}" for v in shape.listed[:3])
            where = ", ".join(_at(p.at + "/" + k) for k in ("const", "enum") for p, _ in shape._all(k))
            return f"every listed value at {where} is refused by the other keywords: {reasons}"
        return None
    problems = {kind: _type_problem(shape, kind, seen) for kind in shape.declared_types}
    if all(problems.values()):
        return "; ".join(dict.fromkeys(p for p in problems.values() if p))
    for keyword in ("anyOf", "oneOf"):
        for location, branches in shape.groups(keyword):
            inner = [_why(shape.model.shape([b]), seen) for b in branches]
            if branches and all(inner):
                return f"every branch of {keyword} at {location} accepts nothing ({'; '.join(i for i in inner if i)})"
    for part in shape.parts:
        forbidden = part.child("not")
        if forbidden is not None and shape.model.shape([forbidden]).parts == () and not forbidden.cut:
            return f"not at {_at(part.at + '/not')} forbids every value"
    return None


def contradiction(ts: ToolSchema) -> str | None:
    """The contradiction that makes *ts* accept nothing, named with its keywords and locations, or None.

    Only what the keywords show is found (``false`` where a value is needed, bounds that cross, a
    required property that is forbidden or accepts nothing, ``const``/``enum`` values the other keywords
    refuse, branches that all accept nothing); a schema it passes may still accept nothing, which the
    generators then report as ``unsatisfiable`` too.
    """
    return _why(model_of(ts).root_shape, set())


def compile_schema(schema: Any, *, name: str | None = None, recursion_depth: int | None = None) -> ToolSchema:
    """*schema* compiled: a :class:`ToolSchema` with its model, checked for contradictions.

    A :class:`ToolSchema` is returned as is. A schema compiled before (the same object, unchanged) is
    reused, so a caller that compiled with a ``recursion_depth`` gives every later caller that setting.

    :raises SchemaProblem: see :class:`ToolSchema`; ``over-limit`` (:mod:`feeler._limits`);
        ``unsatisfiable`` with the contradiction named.
    """
    if isinstance(schema, ToolSchema):
        ts = schema
    else:
        ts = _cached(schema, name, recursion_depth)
    if "_checked" not in ts.__dict__:
        model_of(ts)
        ts.__dict__["_checked"] = contradiction(ts)
    problem = ts.__dict__["_checked"]
    if problem:
        raise SchemaProblem(f"{ts.where}the schema accepts no value: {problem}", reason="unsatisfiable")
    return ts


_CACHE: dict[int, tuple[Any, str, ToolSchema]] = {}
_CACHE_SIZE = 256


def _cached(schema: Any, name: str | None, recursion_depth: int | None) -> ToolSchema:
    check_schema_limits(schema, name=name)  # feeler._limits: depth, size, enum
    text = canonical_dumps(schema)
    entry = _CACHE.get(id(schema))
    if (entry is not None and entry[1] == text and name in (None, entry[2].name)
            and recursion_depth in (None, entry[2].recursion_depth)):  # fmt: skip
        return entry[2]
    ts = ToolSchema(schema, name=name, recursion_depth=DEFAULT_RECURSION_DEPTH if recursion_depth is None else recursion_depth)
    if len(_CACHE) >= _CACHE_SIZE:
        _CACHE.pop(next(iter(_CACHE)))
    # The entry keeps *schema* alive, so its id is never reused for another object while cached.
    _CACHE[id(schema)] = (schema, text, ts)
    return ts

