"""Hypothesis strategies of valid arguments, built by construction from the schema.

For the common shapes (typed scalars with bounds, enums, formats, patterns, arrays, objects with
``properties``/``required``, ``anyOf``/``oneOf``, ``$ref``) the strategy is assembled from hypothesis'
own strategies, so it is fast and shrinks well. ``if``/``then``/``else`` becomes a choice of the two
branches, ``contains`` adds matching items; any other keyword (``not``, ``dependentSchemas``,
``unevaluated*``...) is drawn without it and the result filtered by the node's oracle. Only public
hypothesis strategies are used (no hypothesis-jsonschema), so any hypothesis from 6.100 on works.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable, Iterator
from typing import Any

from hypothesis import HealthCheck, Phase, find, given, settings
from hypothesis import seed as hypothesis_seed
from hypothesis import strategies as st
from hypothesis.errors import NoSuchExample, Unsatisfiable

from feeler._json import canonical_dumps
from feeler.generate._build import TYPES, Unbuildable, _lower, _upper, effective, node_types
from feeler.generate import _ecma
from feeler.generate._formats import format_strategies
from feeler.generate._schema import ToolSchema

__all__ = ["draws", "objects", "searched_example", "searched_examples", "strategy_for"]

#: Keywords the by-construction path understands; a node with any other constraining keyword falls back.
_KNOWN = {
    "type", "const", "enum", "anyOf", "oneOf", "properties", "required", "additionalProperties",
    "minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum", "multipleOf",
    "minLength", "maxLength", "pattern", "format", "items", "prefixItems", "minItems", "maxItems", "uniqueItems",
    "dependentRequired", "dependencies", "minProperties", "maxProperties", "propertyNames", "patternProperties",
    "title", "description", "default", "examples", "$comment", "deprecated", "readOnly", "writeOnly",
    "$schema", "$id", "$anchor", "$defs", "definitions", "contentMediaType", "contentEncoding",
}  # fmt: skip
#: Keywords handled beside _KNOWN: "contains" items are added, then the array is filtered by the oracle.
_BEYOND = _KNOWN | {"contains", "minContains", "maxContains"}
#: Unbounded sizes are capped this far above the lower bound: tool arguments are small.
_SPAN = 4
_FORMATS = format_strategies()
_QUIET = [h for h in HealthCheck]


def strategy_for(ts: ToolSchema, node: Any) -> st.SearchStrategy[Any]:
    """A strategy of values valid against *node* (cached per node; fallback nodes are oracle-filtered)."""
    # Keyed by id(); the entry keeps the node alive so an id is never reused for another node.
    cache: dict[int, tuple[Any, st.SearchStrategy[Any]]] = ts.__dict__.setdefault("_strategies", {})
    entry = cache.get(id(node))
    if entry is None:
        entry = cache[id(node)] = (node, _strategy(ts, node))
    return entry[1]


def _fallback(ts: ToolSchema, raw: Any, node: Any = None) -> st.SearchStrategy[Any]:
    """Values for a node the builders do not fully know: drawn from what they know, filtered by the oracle."""
    if isinstance(node, dict):
        known = {k: v for k, v in node.items() if k in _KNOWN}
        if "if" in node:
            # 2020-12 core 10.2.2: a value passes through "then" when it meets "if", else through "else".
            branches = [{"allOf": [known, node["if"], node.get("then", True)]}, {"allOf": [known, node.get("else", True)]}]
            base = st.one_of([strategy_for(ts, b) for b in branches])
        else:
            base = strategy_for(ts, known) if known else _json_values()
    else:
        base = _json_values()
    return base.filter(lambda v: ts.valid_under(raw, v))


def _strategy(ts: ToolSchema, node: Any) -> st.SearchStrategy[Any]:
    raw = node
    try:
        node = effective(ts, node)
    except Exception:  # noqa: BLE001 - anything odd: let the fallback decide
        return _fallback(ts, raw)
    if node is True:
        return _json_values()
    if node is False:
        return st.nothing()
    if set(node) - _BEYOND:
        return _fallback(ts, raw, node)
    if "const" in node:
        return st.just(node["const"]).filter(lambda v: ts.valid_under(raw, v))
    if "enum" in node:
        members = [m for m in node["enum"] if ts.valid_under(raw, m)]
        return st.sampled_from(members) if members else st.nothing()
    for key in ("anyOf", "oneOf"):
        if key in node:
            rest = {k: v for k, v in node.items() if k != key}
            branches = [strategy_for(ts, {"allOf": [rest, b]} if rest else b) for b in node[key]]
            return st.one_of(branches).filter(lambda v: ts.valid_under(raw, v))
    parts = []
    for kind in node_types(node):
        try:
            parts.append(_TYPE_STRATEGIES[kind](ts, node))
        except Unbuildable:
            continue
    if not parts:
        return _fallback(ts, raw)
    if "contains" in node:
        return st.one_of(parts).filter(lambda v: ts.valid_under(raw, v))
    return st.one_of(parts)


def _integers(ts: ToolSchema, node: dict) -> st.SearchStrategy[int]:
    low, high = _lower(node, True), _upper(node, True)
    step = node.get("multipleOf")
    if step is None:
        return st.integers(low, high)
    if not float(step).is_integer():
        raise Unbuildable
    step = int(step)
    return st.integers(
        None if low is None else math.ceil(low / step), None if high is None else math.floor(high / step)
    ).map(lambda k: k * step)


def _numbers(ts: ToolSchema, node: dict) -> st.SearchStrategy[float]:
    low, high = _lower(node, False), _upper(node, False)
    if "multipleOf" in node:
        step = node["multipleOf"]
        klow = None if low is None else math.ceil(low / step)
        khigh = None if high is None else math.floor(high / step)
        return st.integers(klow, khigh).map(lambda k: k * step).filter(lambda v: ts.valid_under(node, v))
    ints = st.integers(None if low is None else math.ceil(low), None if high is None else math.floor(high))
    floats = st.floats(low, high, allow_nan=False, allow_infinity=False)
    return st.one_of(ints, floats).filter(lambda v: (low is None or v >= low) and (high is None or v <= high))


def _strings(ts: ToolSchema, node: dict) -> st.SearchStrategy[str]:
    low, high = node.get("minLength", 0), node.get("maxLength")
    fits = lambda s: len(s) >= low and (high is None or len(s) <= high)  # noqa: E731 - code points, as JSON Schema counts
    if "format" in node:
        if node["format"] not in _FORMATS:
            return st.text(min_size=low, max_size=high if high is not None else low + 2 * _SPAN).filter(
                lambda s: ts.valid_under(node, s))
        strategy = _FORMATS[node["format"]]
        if "pattern" in node:
            return strategy.filter(lambda s: ts.valid_under(node, s))
        return strategy.filter(fits)
    if "pattern" in node:
        # The pattern translated to Python with its ECMA-262 meaning (2020-12 validation section 6.3.3).
        regex = node["pattern"]
        return st.from_regex(_ecma.translate(regex)).filter(lambda s: fits(s) and _ecma.search(regex, s))
    return st.text(st.characters(codec="utf-8"), min_size=low, max_size=high if high is not None else low + 2 * _SPAN)


def _arrays(ts: ToolSchema, node: dict) -> st.SearchStrategy[list]:
    prefix = node.get("prefixItems") or (node["items"] if isinstance(node.get("items"), list) else [])
    rest = node.get("items") if not isinstance(node.get("items"), list) else node.get("additionalItems", True)
    if rest is None:
        rest = True
    low, high = node.get("minItems", 0), node.get("maxItems")
    if high is None:
        high = max(low, len(prefix)) + _SPAN
    head = st.tuples(*(strategy_for(ts, s) for s in prefix)).map(list)
    tail_low, tail_high = max(0, low - len(prefix)), max(0, high - len(prefix))
    tail = st.lists(
        strategy_for(ts, rest) if rest is not True else _json_values(),
        min_size=tail_low,
        max_size=tail_high,
        unique_by=canonical_dumps if node.get("uniqueItems") else None,
    )
    whole = st.builds(lambda h, t: h + t, head, tail) if prefix else tail
    if "contains" in node:
        # At least minContains items the contains subschema accepts (2020-12 core 10.3.1.3), at the end.
        low_c = node.get("minContains", 1)
        high_c = node.get("maxContains", low_c + 1)
        wanted = st.lists(strategy_for(ts, {"allOf": [rest, node["contains"]]}), min_size=low_c, max_size=max(low_c, high_c))
        whole = st.builds(lambda w, v: v + w, wanted, whole)
    if node.get("uniqueItems") and prefix:
        whole = whole.filter(lambda v: len({canonical_dumps(x) for x in v}) == len(v))
    return whole


def objects(ts: ToolSchema, node: dict) -> st.SearchStrategy[dict]:
    """Objects with the ``required`` properties, any subset of the optional ones, and a few extra keys
    where ``additionalProperties``/``patternProperties`` describe them; dependencies are filled in."""
    props = node.get("properties", {})
    required = list(node.get("required", []))
    ap = node.get("additionalProperties", True)
    patterns = node.get("patternProperties") or {}
    names = node.get("propertyNames")
    depends = {k: v for k, v in {**(node.get("dependencies") or {}), **(node.get("dependentRequired") or {})}.items()
               if isinstance(v, list)}  # fmt: skip

    def schema_of(name: str) -> Any:
        if name in props:
            return props[name]
        return {} if ap is True else ap

    fixed = st.fixed_dictionaries(
        {name: strategy_for(ts, schema_of(name)) for name in required},
        optional={name: strategy_for(ts, sub) for name, sub in props.items() if name not in required},
    )
    extras: list[st.SearchStrategy[dict]] = []
    ascii_chars = st.characters(min_codepoint=32, max_codepoint=126)
    for pattern, sub in patterns.items():
        keys = st.from_regex(_ecma.translate(pattern), alphabet=ascii_chars).filter(functools.partial(_ecma.search, pattern))
        extras.append(st.dictionaries(keys, strategy_for(ts, sub), max_size=2))
    if isinstance(ap, dict) or (ap is True and names is not None):
        keys = strategy_for(ts, names).filter(lambda k: isinstance(k, str)) if names is not None else st.text(
            "abcdefghijklmnopqrstuvwxyz_", min_size=1, max_size=8)
        extras.append(st.dictionaries(keys, strategy_for(ts, {} if ap is True else ap), max_size=3))

    @st.composite
    def build(draw: Any) -> dict:
        out = draw(fixed)
        for strategy in extras:
            for key, value in draw(strategy).items():
                out.setdefault(key, value)
        for trigger, needs in depends.items():
            if trigger in out:
                for name in needs:
                    if name not in out:
                        out[name] = draw(strategy_for(ts, schema_of(name)))
        return out

    low, high = node.get("minProperties", 0), node.get("maxProperties")
    return build().filter(lambda v: len(v) >= low and (high is None or len(v) <= high))


def _json_values() -> st.SearchStrategy[Any]:
    scalars = st.none() | st.booleans() | st.integers(-(2**31), 2**31) | st.text(max_size=8)
    return st.recursive(scalars, lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=5), inner, max_size=3), max_leaves=6)


_TYPE_STRATEGIES: dict[str, Callable[[ToolSchema, dict], st.SearchStrategy[Any]]] = {
    "null": lambda ts, node: st.none(),
    "boolean": lambda ts, node: st.booleans(),
    "integer": _integers,
    "number": _numbers,
    "string": _strings,
    "array": _arrays,
    "object": objects,
}
assert set(_TYPE_STRATEGIES) == set(TYPES)


def searched_example(ts: ToolSchema, node: Any) -> Any:
    """The first value hypothesis finds for *node*; deterministic (derandomized, no database).

    :raises Unbuildable: nothing was found within the search budget.
    """
    try:
        return find(
            strategy_for(ts, node),
            lambda _: True,
            # No shrink phase: shrinking a rare find can take seconds; the generate phase alone is
            # still deterministic under derandomize and already tends to small values.
            settings=settings(database=None, derandomize=True, max_examples=200, phases=[Phase.generate],
                              suppress_health_check=_QUIET, deadline=None),  # fmt: skip
        )
    except (NoSuchExample, Unsatisfiable) as exc:
        raise Unbuildable from exc
    except Exception as exc:  # noqa: BLE001 - hypothesis-jsonschema's own failures (e.g. the pin break) surface below
        raise Unbuildable(str(exc)) from exc


def searched_examples(ts: ToolSchema, node: Any, count: int = 50) -> Iterator[Any]:
    """Up to *count* drawn values for *node* (deterministic: a fixed seed)."""
    try:
        yield from draws(strategy_for(ts, node), count, seed=0)
    except Exception:  # noqa: BLE001 - a best-effort source of variety; the caller decides what is enough
        return


def draws(strategy: st.SearchStrategy[Any], count: int, seed: int) -> list[Any]:
    """*count* values drawn from *strategy* under *seed* (hypothesis' generate phase only; no database).

    Not for use inside another ``@given`` test (hypothesis refuses nested ``@given``); draw from
    :func:`feeler.generate.arguments` there instead.
    """
    out: list[Any] = []
    if count <= 0:
        return out

    @settings(max_examples=count, database=None, phases=[Phase.generate], suppress_health_check=_QUIET, deadline=None)
    @hypothesis_seed(seed)
    @given(strategy)
    def collect(value: Any) -> None:
        if len(out) < count:
            out.append(value)

    collect()
    return out
