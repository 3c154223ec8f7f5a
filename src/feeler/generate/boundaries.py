"""Boundary go values: one small function per keyword, registered in :data:`BOUNDARIES`.

Each function yields ``(note, value)`` pairs for one site: values that sit exactly on a bound the
keyword sets (JSON Schema 2020-12 validation spec, section 6). The runner puts each into the valid
instance and keeps it only if the oracle accepts the whole instance. Producers read the compiled model:
``site.kw`` holds the node's own keywords (counts normalised), ``_shape(ts, site)`` the merged shape.

To add one: write ``def myKeyword(ts, site, value) -> Iterator[tuple[str, Any]]`` here and add it to
:data:`BOUNDARIES` (and to :data:`BOUND_KEYWORDS` when its values sit on a limit the schema names).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator
from typing import Any

from feeler.generate._build import Unbuildable, example, multiple_at_least, variants
from feeler.generate._formats import FORMAT_SAMPLES
from feeler.generate._model import Shape, model_of
from feeler.generate._regex import regex_example
from feeler.generate._schema import ToolSchema
from feeler.generate._walk import Site

__all__ = ["BOUNDARIES", "Boundary"]

Boundary = Callable[[ToolSchema, Site, Any], Iterator[tuple[str, Any]]]
#: An astral character (U+1D11E): one code point, two UTF-16 units. Strings of it prove lengths are
#: counted in code points, as JSON Schema 2020-12 validation section 6.3.1 requires.
ASTRAL = "\U0001d11e"


def _shape(ts: ToolSchema, site: Site) -> Shape:
    return model_of(ts).shape_of(site.node)


def _integer_only(ts: ToolSchema, site: Site) -> bool:
    types = _shape(ts, site).types
    return "integer" in types and "number" not in types


def _numeric(site: Site) -> bool:
    return isinstance(site.value, (int, float)) and not isinstance(site.value, bool)


def minimum(ts: ToolSchema, site: Site, bound: float) -> Iterator[tuple[str, Any]]:
    """The minimum itself (the smallest multiple at or above it when multipleOf is set)."""
    if not _numeric(site):
        return
    step = site.kw.get("multipleOf")
    value = multiple_at_least(bound, step) if step else (math.ceil(bound) if _integer_only(ts, site) else bound)
    yield f"minimum {bound}", value


def maximum(ts: ToolSchema, site: Site, bound: float) -> Iterator[tuple[str, Any]]:
    """The maximum itself (the largest multiple at or below it when multipleOf is set)."""
    if not _numeric(site):
        return
    step = site.kw.get("multipleOf")
    value = -multiple_at_least(-bound, step) if step else (math.floor(bound) if _integer_only(ts, site) else bound)
    yield f"maximum {bound}", value


def exclusiveMinimum(ts: ToolSchema, site: Site, bound: Any) -> Iterator[tuple[str, Any]]:
    """The nearest value inside: bound + 1 for integers, the next float up for numbers."""
    if not _numeric(site) or isinstance(bound, bool):
        return
    step = site.kw.get("multipleOf")
    if step:
        value: Any = multiple_at_least(bound, step, exclusive=True)
    elif _integer_only(ts, site):
        value = math.floor(bound) + 1
    else:
        value = math.nextafter(bound, math.inf)
    yield f"exclusiveMinimum {bound}: nearest inside", value


def exclusiveMaximum(ts: ToolSchema, site: Site, bound: Any) -> Iterator[tuple[str, Any]]:
    """The nearest value inside: bound - 1 for integers, the next float down for numbers."""
    if not _numeric(site) or isinstance(bound, bool):
        return
    step = site.kw.get("multipleOf")
    if step:
        value: Any = -multiple_at_least(-bound, step, exclusive=True)
    elif _integer_only(ts, site):
        value = math.ceil(bound) - 1
    else:
        value = math.nextafter(bound, -math.inf)
    yield f"exclusiveMaximum {bound}: nearest inside", value


def multipleOf(ts: ToolSchema, site: Site, step: float) -> Iterator[tuple[str, Any]]:
    """A non-zero multiple: the step itself, and the multiple next above the valid value."""
    if not _numeric(site):
        return
    yield f"multipleOf {step}", step
    yield f"multipleOf {step}", multiple_at_least(site.value, step, exclusive=True)


def _exact_length(site: Site, length: int) -> Iterator[str]:
    node = site.kw
    if "pattern" in node:
        for grow in range(0, length + 2):
            text = regex_example(node["pattern"], grow)
            if text is not None and len(text) == length:
                yield text
                return
    elif "format" not in node:
        yield ASTRAL * length


def minLength(ts: ToolSchema, site: Site, low: int) -> Iterator[tuple[str, Any]]:
    """A string of exactly minLength code points."""
    if isinstance(site.value, str) and not site.key_mode:
        for text in _exact_length(site, low):
            yield f"minLength {low} (code points)", text


def maxLength(ts: ToolSchema, site: Site, high: int) -> Iterator[tuple[str, Any]]:
    """A string of exactly maxLength code points."""
    if isinstance(site.value, str) and not site.key_mode:
        for text in _exact_length(site, high):
            yield f"maxLength {high} (code points)", text


def _items(ts: ToolSchema, site: Site, count: int) -> list[Any]:
    value = site.value
    if len(value) >= count:
        return value[:count]
    shape = _shape(ts, site)
    if site.kw.get("uniqueItems"):
        return value + [v for v in variants(shape.rest, count + len(value)) if v not in value][: count - len(value)]
    filler = value[-1] if value else example(shape.item(0))
    return value + [filler] * (count - len(value))


def minItems(ts: ToolSchema, site: Site, low: int) -> Iterator[tuple[str, Any]]:
    """An array of exactly minItems items."""
    if isinstance(site.value, list):
        try:
            yield f"minItems {low}", _items(ts, site, low)
        except Unbuildable:
            return


def maxItems(ts: ToolSchema, site: Site, high: int) -> Iterator[tuple[str, Any]]:
    """An array of exactly maxItems items."""
    if isinstance(site.value, list):
        try:
            yield f"maxItems {high}", _items(ts, site, high)
        except Unbuildable:
            return


def enum(ts: ToolSchema, site: Site, members: list[Any]) -> Iterator[tuple[str, Any]]:
    """Each member."""
    if site.key_mode:
        members = [m for m in members if isinstance(m, str)]
    for i, member in enumerate(members):
        yield f"enum member {i}", member


def const(ts: ToolSchema, site: Site, value: Any) -> Iterator[tuple[str, Any]]:
    """The constant."""
    yield "const", value


def format_(ts: ToolSchema, site: Site, name: str) -> Iterator[tuple[str, Any]]:
    """A well-formed value of the format."""
    if name in FORMAT_SAMPLES:
        yield f"format {name}", FORMAT_SAMPLES[name]


def pattern(ts: ToolSchema, site: Site, regex: str) -> Iterator[tuple[str, Any]]:
    """The shortest string our builder finds for the pattern."""
    text = regex_example(regex)
    if text is not None:
        yield "pattern: shortest match", text


def _object_with(ts: ToolSchema, site: Site, count: int) -> dict | None:
    value = site.value
    need = set(site.kw.get("required", []))
    keys = sorted(value, key=lambda k: k not in need)
    if len(keys) >= count:
        return {k: value[k] for k in keys[:count]}
    out = dict(value)
    shape = _shape(ts, site)
    for name in shape.declared:
        if len(out) >= count:
            break
        if name not in out:
            try:
                out[name] = example(shape.for_key(name))
            except Unbuildable:
                continue
    return out if len(out) == count else None


def minProperties(ts: ToolSchema, site: Site, low: int) -> Iterator[tuple[str, Any]]:
    """An object with exactly minProperties properties."""
    if isinstance(site.value, dict) and not site.key_mode:
        out = _object_with(ts, site, low)
        if out is not None:
            yield f"minProperties {low}", out


def maxProperties(ts: ToolSchema, site: Site, high: int) -> Iterator[tuple[str, Any]]:
    """An object with exactly maxProperties properties."""
    if isinstance(site.value, dict) and not site.key_mode:
        out = _object_with(ts, site, high)
        if out is not None:
            yield f"maxProperties {high}", out


def required(ts: ToolSchema, site: Site, names: list[str]) -> Iterator[tuple[str, Any]]:
    """The smallest object: the required properties only (plus what dependentRequired then asks for)."""
    if isinstance(site.value, dict) and not site.key_mode:
        smallest = {k: v for k, v in site.value.items() if k in names}
        for trigger, needs in _shape(ts, site).depends.items():
            if trigger in smallest:
                smallest.update({n: site.value[n] for n in needs if n in site.value})
        yield "smallest object: required properties only", smallest


def properties(ts: ToolSchema, site: Site, props: dict) -> Iterator[tuple[str, Any]]:
    """The fullest object: every declared property present."""
    if isinstance(site.value, dict) and not site.key_mode:
        fullest = dict(site.value)
        shape = _shape(ts, site)
        for name in props:
            if name not in fullest:
                try:
                    fullest[name] = example(shape.for_key(name), full=True)
                except Unbuildable:
                    continue
        yield "fullest object: every optional property", fullest


#: keyword -> boundary producer.
#: Keywords whose boundary go cases sit exactly on a promised limit (where off-by-one defects live).
BOUND_KEYWORDS = frozenset({
    "minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum", "multipleOf",
    "minLength", "maxLength", "minItems", "maxItems", "minProperties", "maxProperties",
})

BOUNDARIES: dict[str, Boundary] = {
    "minimum": minimum,
    "maximum": maximum,
    "exclusiveMinimum": exclusiveMinimum,
    "exclusiveMaximum": exclusiveMaximum,
    "multipleOf": multipleOf,
    "minLength": minLength,
    "maxLength": maxLength,
    "minItems": minItems,
    "maxItems": maxItems,
    "enum": enum,
    "const": const,
    "format": format_,
    "pattern": pattern,
    "minProperties": minProperties,
    "maxProperties": maxProperties,
    "required": required,
    "properties": properties,
}
