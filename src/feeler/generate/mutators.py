"""No-go mutators: one small function per JSON Schema keyword, registered in :data:`MUTATORS`.

A mutator gets the compiled schema, a :class:`~feeler.generate._walk.Site` (a node applied to one
location of a valid instance) and the keyword's value, and yields *candidate* replacement values for
that location. It does not need to be right: the runner puts each candidate into the instance and
keeps it only if ``jsonschema`` reports an error with this keyword at this location (JSON Schema
2020-12 validation spec, section 6 for each keyword's meaning). Keywords that are only applicators
(``properties``, ``items``, ``allOf``, ``then``...) have no mutator: the walker descends into them.

Mutators read the compiled model: ``site.kw`` is the node's own keywords (counts normalised), and
values they need (an item to add, a property to fill in) come from :func:`_build.example` on a
:class:`~._model.Shape` (``_shape(ts, site)``, ``site.node.child(...)``).

To add a keyword: write ``def myKeyword(ts, site, value) -> Iterator[Any]`` here and add it to
:data:`MUTATORS`; the corpus test (tests/generate/test_gen_keywords.py) then holds it to the oracle
and fails if a place of that keyword is left unbroken.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator
from typing import Any

from feeler.generate import _ecma
from feeler.generate._build import Unbuildable, example, find_value, variants
from feeler.generate._formats import FORMAT_NEAR_MISSES
from feeler.generate._model import Shape, model_of
from feeler.generate._schema import ToolSchema
from feeler.generate._walk import Site

__all__ = ["MUTATORS", "Mutator", "near_misses"]

Mutator = Callable[[ToolSchema, Site, Any], Iterator[Any]]

#: A key no sane schema declares; used where a mutator needs an unknown property.
UNKNOWN_KEY = "feeler_unknown_property"


def near_misses(value: Any) -> Iterator[Any]:
    """Values one slip away from *value*: other case, padded, neighbouring number, flipped boolean."""
    if isinstance(value, bool):
        yield not value
        yield str(value).lower()
    elif isinstance(value, int):
        yield value + 1
        yield value - 1
        yield str(value)
    elif isinstance(value, float):
        yield math.nextafter(value, math.inf)
        yield math.nextafter(value, -math.inf)
        yield str(value)
    elif isinstance(value, str):
        for variant in (value.upper(), value.lower(), value.swapcase(), " " + value, value + " ", value[:-1], value + "x"):
            if variant != value:
                yield variant
    elif value is None:
        yield "null"
        yield 0
    elif isinstance(value, list):
        yield value[:-1] if value else [None]
    elif isinstance(value, dict):
        yield {**value, UNKNOWN_KEY: 1}


def type_(ts: ToolSchema, site: Site, declared: Any) -> Iterator[Any]:
    """Each JSON type the node excludes: null, booleans where numbers are expected, numbers as strings..."""
    if site.key_mode:  # property names are always strings
        return
    allowed = {declared} if isinstance(declared, str) else set(declared)
    value = site.value
    samples = {
        "null": None,
        "boolean": True,
        "integer": 7,
        "number": 1.5,
        "string": str(value) if isinstance(value, (int, float)) and not isinstance(value, bool) else "text",
        "array": [value],
        "object": {},
    }
    for kind, sample in samples.items():
        if kind in allowed or (kind == "integer" and "number" in allowed):
            continue
        yield sample


def required(ts: ToolSchema, site: Site, names: list[str]) -> Iterator[Any]:
    """Drop each required property in turn."""
    if isinstance(site.value, dict):
        for name in names:
            if name in site.value:
                yield {k: v for k, v in site.value.items() if k != name}


#: Names tried for an unknown key, in order: the first that no property declares and no pattern matches.
_UNKNOWN_KEYS = (UNKNOWN_KEY, "Feeler-Unknown", "9 unknown!")


def _unknown_key(ts: ToolSchema, site: Site) -> Iterator[Any]:
    if isinstance(site.value, dict):
        shape = _shape(ts, site)
        for key in _UNKNOWN_KEYS:
            if key not in site.value and key not in shape.declared and not any(_ecma.search(p, key) for p in shape.pattern_keys):
                yield {**site.value, key: "unexpected"}
                return


def additionalProperties(ts: ToolSchema, site: Site, spec: Any) -> Iterator[Any]:
    """An unknown key (one no ``patternProperties`` matches) where ``additionalProperties`` is false (a
    schema form is walked into instead)."""
    if spec is False:
        yield from _unknown_key(ts, site)


def unevaluatedProperties(ts: ToolSchema, site: Site, spec: Any) -> Iterator[Any]:
    """An unknown key where ``unevaluatedProperties`` is false."""
    if spec is False:
        yield from _unknown_key(ts, site)


def enum(ts: ToolSchema, site: Site, members: list[Any]) -> Iterator[Any]:
    """Near misses of the first few members (other case, padded, neighbouring number)."""
    for member in members[:3]:
        yield from near_misses(member)
    yield "feeler-not-a-member"


def const(ts: ToolSchema, site: Site, value: Any) -> Iterator[Any]:
    """Near misses of the constant."""
    yield from near_misses(value)


def _shape(ts: ToolSchema, site: Site) -> Shape:
    return model_of(ts).shape_of(site.node)


def _integer_only(ts: ToolSchema, site: Site) -> bool:
    types = _shape(ts, site).types
    return "integer" in types and "number" not in types


def minimum(ts: ToolSchema, site: Site, bound: float) -> Iterator[Any]:
    """One step below: 1 for integers, the next float down for numbers."""
    if _integer_only(ts, site):
        yield math.ceil(bound) - 1
    else:
        yield math.nextafter(bound, -math.inf)
        yield bound - 1


def maximum(ts: ToolSchema, site: Site, bound: float) -> Iterator[Any]:
    """One step above: 1 for integers, the next float up for numbers."""
    if _integer_only(ts, site):
        yield math.floor(bound) + 1
    else:
        yield math.nextafter(bound, math.inf)
        yield bound + 1


def exclusiveMinimum(ts: ToolSchema, site: Site, bound: Any) -> Iterator[Any]:
    """The bound itself (the first value past the nearest inside value)."""
    if isinstance(bound, bool):  # draft-04 boolean form: not one of our dialects
        return
    yield math.floor(bound) if _integer_only(ts, site) else bound


def exclusiveMaximum(ts: ToolSchema, site: Site, bound: Any) -> Iterator[Any]:
    """The bound itself."""
    if isinstance(bound, bool):
        return
    yield math.ceil(bound) if _integer_only(ts, site) else bound


def multipleOf(ts: ToolSchema, site: Site, step: float) -> Iterator[Any]:
    """The valid value nudged off the grid (by 1 for integer steps, by half a step otherwise)."""
    value = site.value if isinstance(site.value, (int, float)) and not isinstance(site.value, bool) else 0
    if float(step).is_integer() and step != 1:
        yield value + 1
        yield value - 1
    yield value + step / 2


def minLength(ts: ToolSchema, site: Site, low: int) -> Iterator[Any]:
    """One code point short."""
    if low > 0 and isinstance(site.value, str):
        yield site.value[: low - 1]
        yield "a" * (low - 1)


def maxLength(ts: ToolSchema, site: Site, high: int) -> Iterator[Any]:
    """One code point long (an astral character counts as one, as JSON Schema counts)."""
    if isinstance(site.value, str):
        yield site.value + (site.value[-1:] or "a") * (high + 1 - len(site.value))
        yield "a" * (high + 1)
        yield "\U0001d11e" * (high + 1)


def pattern(ts: ToolSchema, site: Site, regex: str) -> Iterator[Any]:
    """Near-miss strings: changed case, a stray character, a character dropped, digits and letters swapped;
    a trailing newline where the pattern ends in ``$`` (ECMA-262 ``$`` does not match before it, Python's does)."""
    value = site.value if isinstance(site.value, str) else ""
    if regex.endswith("$") and not regex.endswith("\\$"):
        yield value + "\n"
    swapped = "".join("a" if c.isdigit() else ("0" if c.isalpha() else c) for c in value)
    for candidate in (value + "!", "!" + value, value.upper(), value.lower(), value[:-1], value[1:],
                      swapped, " " + value, value.replace("-", "_"), "", "!"):  # fmt: skip
        if candidate != value:
            yield candidate


def format_(ts: ToolSchema, site: Site, name: str) -> Iterator[Any]:
    """Near misses per format (RFC 3339 dates and times, RFC 5321 email, RFC 3986 uri, RFC 9562 uuid...)."""
    yield from FORMAT_NEAR_MISSES.get(name, ())


def _item_for(ts: ToolSchema, site: Site) -> Any:
    if site.value:
        return site.value[-1]
    return example(_shape(ts, site).item(0))


def minItems(ts: ToolSchema, site: Site, low: int) -> Iterator[Any]:
    """One item short."""
    if low > 0 and isinstance(site.value, list):
        yield site.value[: low - 1]


def maxItems(ts: ToolSchema, site: Site, high: int) -> Iterator[Any]:
    """One item too many (distinct items when uniqueItems is set, so only maxItems breaks)."""
    if not isinstance(site.value, list):
        return
    if site.kw.get("uniqueItems"):
        try:
            yield variants(_shape(ts, site).rest, high + 1)
        except Unbuildable:
            pass
    try:
        item = _item_for(ts, site)
    except Unbuildable:
        return
    yield site.value + [item] * (high + 1 - len(site.value))


def uniqueItems(ts: ToolSchema, site: Site, unique: bool) -> Iterator[Any]:
    """The first item repeated."""
    if unique and isinstance(site.value, list):
        if site.value:
            yield site.value + [site.value[0]]
        else:
            try:
                item = _item_for(ts, site)
            except Unbuildable:
                return
            yield [item, item]


def minProperties(ts: ToolSchema, site: Site, low: int) -> Iterator[Any]:
    """One property short (optional properties dropped first)."""
    if low > 0 and isinstance(site.value, dict):
        needed = set(site.kw.get("required", []))
        keys = sorted(site.value, key=lambda k: k in needed)
        keep = set(keys[len(keys) - (low - 1):]) if low > 1 else set()
        yield {k: v for k, v in site.value.items() if k in keep}


def maxProperties(ts: ToolSchema, site: Site, high: int) -> Iterator[Any]:
    """One property too many (known optional properties first, then unknown keys)."""
    if not isinstance(site.value, dict):
        return
    out = dict(site.value)
    shape = _shape(ts, site)
    for name in shape.declared:
        if len(out) > high:
            break
        if name not in out:
            try:
                out[name] = example(shape.for_key(name))
            except Unbuildable:
                continue
    i = 0
    while len(out) <= high:
        out[f"{UNKNOWN_KEY}_{i}"] = "extra"
        i += 1
    yield out


def _dependent(ts: ToolSchema, site: Site, mapping: dict) -> Iterator[Any]:
    if not isinstance(site.value, dict):
        return
    for trigger, needs in mapping.items():
        if not isinstance(needs, list):
            continue  # the schema form of draft-07 "dependencies" is walked into
        base = dict(site.value)
        if trigger not in base:
            try:
                base[trigger] = example(_shape(ts, site).for_key(trigger))
            except Unbuildable:
                continue
        for need in needs:
            yield {k: v for k, v in base.items() if k != need}


def dependentRequired(ts: ToolSchema, site: Site, mapping: dict) -> Iterator[Any]:
    """The trigger property present, one of the properties it requires missing."""
    yield from _dependent(ts, site, mapping)


def dependencies(ts: ToolSchema, site: Site, mapping: dict) -> Iterator[Any]:
    """draft-07 ``dependencies``, list form: as ``dependentRequired``."""
    yield from _dependent(ts, site, mapping)


_POOL = (None, True, 0, -1, 1.5, "", "zz", [], {})


def _without_branch_keys(site: Site, keyword: str) -> Iterator[Any]:
    if isinstance(site.value, dict):
        named = {k for _, b in site.node.children(keyword) for k in (*b.kw.get("required", []), *(b.kw.get("properties") or {}))}
        yield {k: v for k, v in site.value.items() if k not in named}


def anyOf(ts: ToolSchema, site: Site, branches: list) -> Iterator[Any]:
    """A value no branch accepts: other types, and the object stripped of every branch's keys.

    Branch-local cases (a keyword inside one branch broken while no branch accepts the value) come from
    the walk: it enters each branch the value goes through (JSON Schema 2020-12 core 10.2.1.2)."""
    yield from _without_branch_keys(site, "anyOf")
    yield from _POOL
    yield from near_misses(site.value)


def oneOf(ts: ToolSchema, site: Site, branches: list) -> Iterator[Any]:
    """A value no branch accepts, and a value two branches accept at once (2020-12 core 10.2.1.3: exactly one)."""
    yield from _overlaps(ts, site)
    yield from _without_branch_keys(site, "oneOf")
    yield from _POOL
    yield from near_misses(site.value)


def _overlaps(ts: ToolSchema, site: Site) -> Iterator[Any]:
    """Values valid under two ``oneOf`` branches (and every other keyword of the node), searched per pair."""
    shape = _shape(ts, site)
    location = site.pointer + "/oneOf"
    branches = [b for _, b in site.node.children("oneOf")]
    if isinstance(site.value, dict):
        merged = dict(site.value)
        for branch in branches:
            try:
                extra = example(model_of(ts).shape_of(branch), full=True)
            except Unbuildable:
                continue
            if isinstance(extra, dict):
                merged = {**extra, **merged}
        yield merged
    for i, first in enumerate(branches):
        for second in branches[i + 1 :]:
            both = shape.choose(location, first, second)
            try:
                # Construction and the seeded sampler only: a hypothesis search per pair costs seconds.
                yield find_value(both, lambda v, a=first, b=second: ts.valid_under(a.raw, v) and ts.valid_under(b.raw, v),
                                 search=False)  # fmt: skip
            except Unbuildable:
                continue


def not_(ts: ToolSchema, site: Site, forbidden: Any) -> Iterator[Any]:
    """A value the forbidden subschema accepts (alone, and merged into the valid object)."""
    node = site.node.child("not")
    if node is None:
        return
    shape = model_of(ts).shape_of(node)
    for full in (False, True):
        try:
            value = example(shape, full)
        except Unbuildable:
            continue
        if isinstance(value, dict) and isinstance(site.value, dict):
            yield {**site.value, **value}
        yield value
    try:
        # A value of the node's other keywords that the forbidden subschema accepts.
        yield find_value(_shape(ts, site).choose(site.pointer + "/not", node))
    except Unbuildable:
        pass


def _matches(ts: ToolSchema, site: Site, value: list) -> list[int]:
    node = site.node.child("contains")
    return [i for i, v in enumerate(value) if node is not None and ts.valid_under(node.raw, v)]


def contains(ts: ToolSchema, site: Site, wanted: Any) -> Iterator[Any]:
    """An array with no item the ``contains`` subschema accepts."""
    if isinstance(site.value, list):
        matched = set(_matches(ts, site, site.value))
        rest = [v for i, v in enumerate(site.value) if i not in matched]
        if rest:
            yield rest
        yield []
        for sample in _POOL:
            yield [sample]


def minContains(ts: ToolSchema, site: Site, low: int) -> Iterator[Any]:
    """One matching item short of ``minContains`` (2020-12 validation 6.4.5); jsonschema reports it under ``contains``."""
    if not isinstance(site.value, list) or low < 2:
        return
    matched = _matches(ts, site, site.value)
    drop = set(matched[low - 1 :])
    yield [v for i, v in enumerate(site.value) if i not in drop]
    others = [v for i, v in enumerate(site.value) if i not in matched]
    if matched:
        yield others + [site.value[matched[0]]] * (low - 1)


def maxContains(ts: ToolSchema, site: Site, high: int) -> Iterator[Any]:
    """One matching item past ``maxContains`` (2020-12 validation 6.4.4); jsonschema reports it under ``contains``."""
    node = site.node.child("contains")
    if not isinstance(site.value, list) or node is None:
        return
    item_shape = _shape(ts, site).rest.merge(model_of(ts).shape_of(node))
    matched = _matches(ts, site, site.value)
    try:
        if site.kw.get("uniqueItems"):
            yield [v for i, v in enumerate(site.value) if i not in set(matched)] + variants(item_shape, high + 1)
        else:
            item = site.value[matched[0]] if matched else example(item_shape)
            yield site.value + [item] * (high + 1 - len(matched))
    except Unbuildable:
        return


def _past_prefix(ts: ToolSchema, site: Site, count: int) -> Iterator[Any]:
    if not isinstance(site.value, list):
        return
    value = list(site.value)
    shape = _shape(ts, site)
    try:
        value += [example(shape.item(i)) for i in range(len(value), count)]
    except Unbuildable:
        return
    yield value + [None]
    yield value + ["feeler-extra-item"]


def items(ts: ToolSchema, site: Site, spec: Any) -> Iterator[Any]:
    """An extra item past ``prefixItems`` where ``items`` is false (2020-12)."""
    if spec is False:
        yield from _past_prefix(ts, site, len(site.kw.get("prefixItems") or []))


def additionalItems(ts: ToolSchema, site: Site, spec: Any) -> Iterator[Any]:
    """An extra item past the tuple where ``additionalItems`` is false (draft-07 array form of ``items``)."""
    if spec is False and isinstance(site.kw.get("items"), list):
        yield from _past_prefix(ts, site, len(site.kw["items"]))


def unevaluatedItems(ts: ToolSchema, site: Site, spec: Any) -> Iterator[Any]:
    """An item past every item the node evaluates where ``unevaluatedItems`` is false (2020-12 core 11.2);
    a schema form is walked into."""
    if spec is False:
        count = len(site.kw.get("prefixItems") or site.kw.get("items") or []) if not isinstance(site.kw.get("items"), dict) else 0
        yield from _past_prefix(ts, site, count)


#: keyword -> mutator. Named like the keyword, with a trailing "_" where that is a Python name.
MUTATORS: dict[str, Mutator] = {
    "type": type_,
    "required": required,
    "additionalProperties": additionalProperties,
    "unevaluatedProperties": unevaluatedProperties,
    "enum": enum,
    "const": const,
    "minimum": minimum,
    "maximum": maximum,
    "exclusiveMinimum": exclusiveMinimum,
    "exclusiveMaximum": exclusiveMaximum,
    "multipleOf": multipleOf,
    "minLength": minLength,
    "maxLength": maxLength,
    "pattern": pattern,
    "format": format_,
    "minItems": minItems,
    "maxItems": maxItems,
    "uniqueItems": uniqueItems,
    "minProperties": minProperties,
    "maxProperties": maxProperties,
    "dependentRequired": dependentRequired,
    "dependencies": dependencies,
    "anyOf": anyOf,
    "oneOf": oneOf,
    "not": not_,
    "contains": contains,
    "minContains": minContains,
    "maxContains": maxContains,
    "items": items,
    "additionalItems": additionalItems,
    "unevaluatedItems": unevaluatedItems,
}
