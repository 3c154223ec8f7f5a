"""Build one valid value for a schema node by construction: the smallest, or the fullest.

Deterministic and fast (no search): numbers sit on their lower bound, strings are as short as allowed,
objects carry the required properties (``full=True``: every property), arrays the fewest items
(``full=True``: at least one). The oracle checks every result; where this builder cannot satisfy a
node (``not``, tricky ``allOf`` mixes...), :func:`example` falls back to a shrunk hypothesis example.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from decimal import Decimal
from typing import Any

from feeler._json import canonical_dumps
from feeler.generate._formats import FORMAT_SAMPLES
from feeler.generate._regex import regex_example
from feeler.generate._schema import ToolSchema

__all__ = ["Unbuildable", "build", "effective", "example", "multiple_at_least", "node_types", "variants"]

TYPES = ("null", "boolean", "integer", "number", "string", "array", "object")
_ANNOTATIONS = {"title", "description", "default", "examples", "$comment", "deprecated", "readOnly", "writeOnly",
                "$schema", "$id", "$anchor", "$defs", "definitions", "contentMediaType", "contentEncoding"}


class Unbuildable(Exception):
    """This builder cannot produce a value for the node; the caller falls back to search."""


def effective(ts: ToolSchema, node: Any) -> Any:
    """*node* with a ``$ref`` followed and ``allOf`` folded in where that is a plain merge."""
    if not isinstance(node, dict):
        return node
    if isinstance(node.get("$ref"), str):
        target = effective(ts, ts.resolve(node["$ref"])[0])
        rest = {k: v for k, v in node.items() if k != "$ref" and k not in _ANNOTATIONS}
        node = target if (ts.ref_overrides or not rest) else _merge(target, effective(ts, rest))
    if isinstance(node, dict) and isinstance(node.get("allOf"), list):
        merged: Any = {k: v for k, v in node.items() if k != "allOf"}
        for sub in node["allOf"]:
            merged = _merge(merged, effective(ts, sub))
        node = merged
    return node


def _merge(a: Any, b: Any) -> Any:
    """Intersect two schemas where it is a plain merge; any conflict is left to the oracle (kept in allOf)."""
    if a is True or a == {}:
        return b
    if b is True or b == {}:
        return a
    if a is False or b is False:
        return False
    out = dict(a)
    rest: dict[str, Any] = {}
    for key, value in b.items():
        if key not in out or out[key] == value:
            out[key] = value
        elif key == "type":
            left = set(out[key] if isinstance(out[key], list) else [out[key]])
            right = set(value if isinstance(value, list) else [value])
            both = left & right
            if "number" in left and "integer" in right or "number" in right and "integer" in left:
                both.add("integer")
            out[key] = sorted(both)
        elif key == "required":
            out[key] = list(dict.fromkeys([*out[key], *value]))
        elif key == "properties":
            props = dict(out[key])
            for name, sub in value.items():
                props[name] = _merge(props[name], sub) if name in props else sub
            out[key] = props
        elif key in ("minimum", "exclusiveMinimum", "minLength", "minItems", "minProperties"):
            out[key] = max(out[key], value)
        elif key in ("maximum", "exclusiveMaximum", "maxLength", "maxItems", "maxProperties"):
            out[key] = min(out[key], value)
        elif key == "enum":
            out[key] = [v for v in out[key] if any(canonical_dumps(v) == canonical_dumps(w) for w in value)]
        else:
            rest[key] = value
    if rest:
        out["allOf"] = [*out.get("allOf", []), rest]
    return out


def node_types(node: dict) -> list[str]:
    """The JSON types a node allows, inferred from its keywords when ``type`` is absent."""
    declared = node.get("type")
    if declared is not None:
        types = [declared] if isinstance(declared, str) else list(declared)
        return [t for t in TYPES if t in types]
    if any(k in node for k in ("properties", "required", "additionalProperties", "patternProperties",
                                "minProperties", "maxProperties", "propertyNames", "dependentRequired")):
        return ["object"]
    if any(k in node for k in ("items", "prefixItems", "minItems", "maxItems", "uniqueItems", "contains")):
        return ["array"]
    if any(k in node for k in ("minLength", "maxLength", "pattern", "format")):
        return ["string"]
    if any(k in node for k in ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum", "multipleOf")):
        return ["number"]
    return list(TYPES)


def multiple_at_least(low: float, step: float, exclusive: bool = False) -> float:
    """The smallest multiple of *step* that is >= *low* (> if *exclusive*), computed in decimal to avoid drift."""
    d_low, d_step = Decimal(repr(low)), Decimal(repr(step))
    k = (d_low / d_step).to_integral_value(rounding="ROUND_CEILING")
    if exclusive and k * d_step <= d_low:
        k += 1
    value = k * d_step
    return int(value) if value == value.to_integral_value() else float(value)


def _lower(node: dict, integer: bool) -> float | None:
    lows = []
    if "minimum" in node:
        lows.append((node["minimum"], False))
    if "exclusiveMinimum" in node and not isinstance(node["exclusiveMinimum"], bool):
        lows.append((node["exclusiveMinimum"], True))
    if not lows:
        return None
    value, exclusive = max(lows, key=lambda p: (p[0], p[1]))
    if integer:
        return math.floor(value) + 1 if exclusive else math.ceil(value)
    return math.nextafter(value, math.inf) if exclusive else value


def _upper(node: dict, integer: bool) -> float | None:
    highs = []
    if "maximum" in node:
        highs.append((node["maximum"], False))
    if "exclusiveMaximum" in node and not isinstance(node["exclusiveMaximum"], bool):
        highs.append((node["exclusiveMaximum"], True))
    if not highs:
        return None
    value, exclusive = min(highs, key=lambda p: (p[0], not p[1]))
    if integer:
        return math.ceil(value) - 1 if exclusive else math.floor(value)
    return math.nextafter(value, -math.inf) if exclusive else value


def _number(node: dict, integer: bool) -> Any:
    low, high = _lower(node, integer), _upper(node, integer)
    start = low if low is not None else (min(0, high) if high is not None else 0)
    if "multipleOf" in node:
        step = node["multipleOf"]
        start = multiple_at_least(start, step) if low is not None else (
            -multiple_at_least(-start, step) if high is not None and start < 0 else 0)
        if integer and not float(start).is_integer():
            raise Unbuildable
    if high is not None and start > high:
        raise Unbuildable
    return int(start) if integer else start


def _string(node: dict) -> str:
    low = node.get("minLength", 0)
    if "format" in node and node["format"] in FORMAT_SAMPLES:
        text = FORMAT_SAMPLES[node["format"]]
    elif "pattern" in node:
        for grow in (0, 1, 3, 8):
            text = regex_example(node["pattern"], grow)
            if text is None or len(text) >= low:
                break
        if text is None:
            raise Unbuildable
    else:
        text = "a" * low
    if len(text) < low or ("maxLength" in node and len(text) > node["maxLength"]):
        raise Unbuildable
    return text


def build(ts: ToolSchema, node: Any, full: bool = False) -> Any:
    """One value for *node* by construction; the caller checks it with the oracle.

    :raises Unbuildable: the node needs search (``not``, ``if``, conflicting ``allOf``...).
    """
    node = effective(ts, node)
    if node is True:
        return None
    if node is False:
        raise Unbuildable
    if "if" in node:
        # Build without the condition, then again with the branch the condition picks for that value.
        rest = {k: v for k, v in node.items() if k not in ("if", "then", "else")}
        value = build(ts, rest, full)
        branch = node.get("then" if ts.valid_under(node["if"], value) else "else")
        return build(ts, _merge(rest, effective(ts, branch)), full) if branch is not None else value
    if "const" in node:
        return node["const"]
    if "enum" in node:
        if not node["enum"]:
            raise Unbuildable
        for member in node["enum"]:
            if ts.valid_under(node, member):
                return member
        raise Unbuildable
    for key in ("anyOf", "oneOf"):
        if key in node:
            rest = {k: v for k, v in node.items() if k != key}
            for branch in node[key]:
                try:
                    value = build(ts, _merge(rest, effective(ts, branch)), full)
                except Unbuildable:
                    continue
                if ts.valid_under(node, value):
                    return value
            raise Unbuildable
    types = node_types(node)
    # Prefer the type that says most about the node, e.g. object over null for an "object or null".
    for kind in ("object", "array", "string", "integer", "number", "boolean", "null"):
        if kind not in types:
            continue
        try:
            return _BUILDERS[kind](ts, node, full)
        except Unbuildable:
            continue
    raise Unbuildable


def _array(ts: ToolSchema, node: dict, full: bool) -> list:
    prefix = node.get("prefixItems") or (node["items"] if isinstance(node.get("items"), list) else [])
    rest = node.get("items") if not isinstance(node.get("items"), list) else node.get("additionalItems", True)
    low = node.get("minItems", 0)
    if "contains" in node:
        low = max(low, node.get("minContains", 1))
    count = max(low, (max(1, len(prefix)) if full else 0))
    if "maxItems" in node:
        count = min(count, node["maxItems"])
    out = [build(ts, sub, full) for sub in prefix[:count]]
    needed = count - len(out)
    if needed > 0:
        if rest is False:
            raise Unbuildable
        item_schema = rest if rest is not None else True
        if "contains" in node:
            item_schema = _merge(effective(ts, item_schema), effective(ts, node["contains"]))
        if node.get("uniqueItems"):
            out.extend(variants(ts, item_schema, needed, full))
        else:
            one = example(ts, item_schema, full)
            out.extend(one for _ in range(needed))
    return out


def _object(ts: ToolSchema, node: dict, full: bool) -> dict:
    props = node.get("properties", {})
    names = list(dict.fromkeys([*node.get("required", []), *(props if full else [])]))
    if "maxProperties" in node:
        must = len(node.get("required", []))
        names = names[: max(must, node["maxProperties"])]
    out: dict[str, Any] = {}
    for name in names:
        out[name] = example(ts, _property_schema(node, name), full)
    for trigger, needs in (node.get("dependentRequired") or {}).items():
        if trigger in out:
            for name in needs:
                if name not in out:
                    out[name] = example(ts, _property_schema(node, name), full)
    extra = 0
    while len(out) < node.get("minProperties", 0):
        candidates = [n for n in props if n not in out]
        name = candidates[0] if candidates else f"extra{extra}"
        extra += 1
        out[name] = example(ts, _property_schema(node, name), full)
        if extra > 64:
            raise Unbuildable
    return out


def _property_schema(node: dict, name: str) -> Any:
    if name in node.get("properties", {}):
        return node["properties"][name]
    ap = node.get("additionalProperties", True)
    return {} if ap is True else ap


_BUILDERS = {
    "null": lambda ts, node, full: None,
    "boolean": lambda ts, node, full: False,
    "integer": lambda ts, node, full: _number(node, True),
    "number": lambda ts, node, full: _number(node, False),
    "string": lambda ts, node, full: _string(node),
    "array": _array,
    "object": _object,
}
assert set(_BUILDERS) == set(TYPES)


def example(ts: ToolSchema, node: Any, full: bool = False) -> Any:
    """A value valid against *node* (checked by the oracle), by construction or else by shrunk search.

    :raises Unbuildable: neither construction nor a bounded search found a valid value.
    """
    try:
        value = build(ts, node, full)
        if ts.valid_under(node, value):
            return value
    except Unbuildable:
        pass
    from feeler.generate._strategies import searched_example  # late: strategies import this module

    return searched_example(ts, node)


def variants(ts: ToolSchema, node: Any, count: int, full: bool = False) -> list[Any]:
    """*count* distinct valid values for *node* (for uniqueItems), or :class:`Unbuildable`."""
    seen: dict[str, Any] = {}
    for value in _candidates(ts, node, full):
        key = canonical_dumps(value)
        if key not in seen and ts.valid_under(node, value):
            seen[key] = value
            if len(seen) == count:
                return list(seen.values())
    raise Unbuildable


def _candidates(ts: ToolSchema, node: Any, full: bool) -> Iterator[Any]:
    eff = effective(ts, node)
    if isinstance(eff, dict) and "enum" in eff:
        yield from eff["enum"]
        return
    try:
        base = build(ts, node, full)
    except Unbuildable:
        base = None
    if base is not None:
        yield base
    if isinstance(base, bool):
        yield not base
    elif isinstance(base, (int, float)):
        step = eff.get("multipleOf", 1) if isinstance(eff, dict) else 1
        for i in range(1, 200):
            yield base + i * step
            yield base - i * step
    elif isinstance(base, str):
        for i in range(200):
            yield base + str(i)
            yield base + "abcdefghijklmnopqrstuvwxyz"[i % 26] * (1 + i // 26)
    elif isinstance(base, dict):
        for i in range(200):
            for key in list(base):
                tweaked = dict(base)
                for alt in _candidates(ts, (eff.get("properties") or {}).get(key, {}), full):
                    if alt != base[key]:
                        tweaked[key] = alt
                        break
                yield tweaked
            break
    from feeler.generate._strategies import searched_examples

    yield from searched_examples(ts, node)
