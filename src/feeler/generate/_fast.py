"""Seeded go cases built by construction with :class:`random.Random`, outside hypothesis' engine.

hypothesis spends most of a draw on its own bookkeeping (choice sequences, health checks, the
``@given`` loop), which caps drawn go cases at a few hundred per second. Here the schema is compiled
once into one small sampler per node (a closure ``rng -> value``); a case is one call of the root
sampler plus one oracle check (``ToolSchema.is_valid``). Nodes the samplers do not understand
(``not``, ``if``, ``contains``...) are sampled without the extra keywords and filtered by the
node's own validator; a node that still cannot be sampled draws from a small pool of hypothesis
values made once per node (:func:`~feeler.generate._strategies.searched_examples`), and a root that
keeps failing falls back to :func:`~feeler.generate._strategies.draws` of the full strategy.
Every returned value passed the oracle; the same seed gives the same cases.
"""

from __future__ import annotations

import copy
import math
import random
import re
import string
from collections.abc import Callable
from decimal import Decimal
from typing import Any

from feeler._json import canonical_dumps
from feeler.generate._build import Unbuildable, _lower, _merge, _upper, effective, node_types
from feeler.generate import _ecma
from feeler.generate._formats import FORMAT_SAMPLES
from feeler.generate._regex import _c, _p, regex_example
from feeler.generate._schema import ToolSchema

__all__ = ["fast_values", "sampler_for"]

Sampler = Callable[[random.Random], Any]

#: Keywords the samplers build for directly.
_KNOWN = {
    "type", "const", "enum", "anyOf", "oneOf", "properties", "required", "additionalProperties",
    "minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum", "multipleOf",
    "minLength", "maxLength", "pattern", "format", "items", "prefixItems", "additionalItems",
    "minItems", "maxItems", "uniqueItems", "dependentRequired", "dependencies", "minProperties",
    "maxProperties", "propertyNames", "patternProperties",
    "title", "description", "default", "examples", "$comment", "deprecated", "readOnly", "writeOnly",
    "$schema", "$id", "$anchor", "$defs", "definitions", "contentMediaType", "contentEncoding",
}  # fmt: skip
#: Tries per node before a filtered sampler gives up on this value.
_TRIES = 8
#: Unbounded sizes are capped this far above the lower bound: tool arguments are small.
_SPAN = 4
#: Unbounded numbers are drawn this far from their one bound (or from 0).
_REACH = 1000
#: Pool size for nodes only hypothesis can draw.
_POOL = 30
_ASCII = string.ascii_letters + string.digits
_PRINTABLE = "".join(chr(c) for c in range(32, 127))
#: A few characters outside ASCII (2-, 3- and 4-byte UTF-8): servers must take any code point.
_WIDE = "éßøΩжあ中🙂"
_KEY_CHARS = string.ascii_lowercase + "_"
_LABEL = string.ascii_lowercase + string.digits


class _Miss(Exception):
    """This draw did not satisfy the node; the caller draws again."""


def sampler_for(ts: ToolSchema, node: Any) -> Sampler:
    """The sampler of values for *node* (compiled once per node and cached on *ts*)."""
    # Keyed by id(); the entry keeps the node alive so an id is never reused for another node.
    cache: dict[int, tuple[Any, Sampler]] = ts.__dict__.setdefault("_fast_samplers", {})
    entry = cache.get(id(node))
    if entry is None:
        entry = cache[id(node)] = (node, _compile(ts, node))
    return entry[1]


def fast_values(ts: ToolSchema, count: int, rng: random.Random) -> tuple[list[Any], int]:
    """Up to *count* oracle-checked values for the whole schema, and how many candidates were refused.

    Stops early (returning fewer) when the refusals outnumber the accepted values by far: the caller
    then fills the rest from hypothesis.
    """
    root = sampler_for(ts, ts.schema)
    out: list[Any] = []
    seen: set[str] = set()
    refused = 0
    budget = 20 * count + 50
    while len(out) < count and budget > 0:
        budget -= 1
        try:
            value = root(rng)
        except (_Miss, Unbuildable):
            refused += 1
            continue
        if not ts.is_valid(value):
            refused += 1
            continue
        # Prefer a new value, but accept a repeat now and then: small enums have few values.
        key = canonical_dumps(value)
        if key in seen and rng.random() < 0.9:
            continue
        seen.add(key)
        out.append(value)
    return out, refused


# -- compilation ---------------------------------------------------------------------------------------


def _compile(ts: ToolSchema, raw: Any) -> Sampler:
    try:
        node = effective(ts, raw)
    except Exception:  # noqa: BLE001 - anything odd: let the pool decide
        return _pool(ts, raw)
    if node is True:
        return _any_json
    if node is False or not isinstance(node, dict):
        return _never
    unknown = set(node) - _KNOWN
    if unknown:
        # Sample the node without what we do not understand and keep what the node's validator accepts.
        rest = {k: v for k, v in node.items() if k not in unknown}
        try:
            inner = _compile_known(ts, rest)
        except Unbuildable:
            return _pool(ts, raw)
        return _filtered(ts, raw, inner)
    try:
        return _compile_known(ts, node, raw)
    except Unbuildable:
        return _pool(ts, raw)


def _compile_known(ts: ToolSchema, node: dict, raw: Any = None) -> Sampler:
    check = raw if raw is not None else node
    if "const" in node:
        value = node["const"]
        if not ts.valid_under(check, value):
            raise Unbuildable
        return lambda rng: copy.deepcopy(value)
    if "enum" in node:
        members = [m for m in node["enum"] if ts.valid_under(check, m)]
        if not members:
            raise Unbuildable
        return lambda rng: copy.deepcopy(rng.choice(members))
    for key in ("anyOf", "oneOf"):
        if key in node:
            return _choice(ts, node, key, check)
    parts = []
    for kind in node_types(node):
        try:
            parts.append(_TYPES[kind](ts, node))
        except Unbuildable:
            continue
    if not parts:
        raise Unbuildable
    if len(parts) == 1:
        return parts[0]
    return lambda rng: rng.choice(parts)(rng)


def _choice(ts: ToolSchema, node: dict, key: str, check: Any) -> Sampler:
    """anyOf/oneOf: pick a branch (merged with the node's other keywords), keep it if the node accepts it."""
    rest = {k: v for k, v in node.items() if k != key}
    branches = [sampler_for(ts, _merge(rest, effective(ts, b)) if rest else b) for b in node[key]]
    if not branches:
        raise Unbuildable

    def sample(rng: random.Random) -> Any:
        for _ in range(_TRIES):
            try:
                value = rng.choice(branches)(rng)
            except (_Miss, Unbuildable):
                continue
            if ts.valid_under(check, value):
                return value
        raise _Miss

    return sample


def _filtered(ts: ToolSchema, raw: Any, inner: Sampler) -> Sampler:
    pool: list[Sampler] = []

    def sample(rng: random.Random) -> Any:
        for _ in range(_TRIES):
            try:
                value = inner(rng)
            except (_Miss, Unbuildable):
                continue
            if ts.valid_under(raw, value):
                return value
        if not pool:
            pool.append(_pool(ts, raw))
        return pool[0](rng)

    return sample


def _pool(ts: ToolSchema, raw: Any) -> Sampler:
    """Values only hypothesis can find: drawn once (deterministically), then picked from at random."""
    from feeler.generate._strategies import searched_examples  # late: strategies import the builders

    values: list[Any] | None = None

    def sample(rng: random.Random) -> Any:
        nonlocal values
        if values is None:
            values = [v for v in searched_examples(ts, raw, _POOL) if ts.valid_under(raw, v)]
        if not values:
            raise Unbuildable
        return copy.deepcopy(rng.choice(values))

    return sample


def _never(rng: random.Random) -> Any:
    raise Unbuildable


def _any_json(rng: random.Random, depth: int = 0) -> Any:
    roll = rng.random()
    if depth < 2 and roll < 0.15:
        return [_any_json(rng, depth + 1) for _ in range(rng.randint(0, 3))]
    if depth < 2 and roll < 0.3:
        return {_key(rng): _any_json(rng, depth + 1) for _ in range(rng.randint(0, 3))}
    return rng.choice((None, True, False, rng.randint(-(2**31), 2**31), _text(rng, 0, 8)))


# -- scalars -------------------------------------------------------------------------------------------


def _integer(ts: ToolSchema, node: dict) -> Sampler:
    low, high = _lower(node, True), _upper(node, True)
    step = node.get("multipleOf", 1)
    if not float(step).is_integer():
        raise Unbuildable
    step = int(step)
    low, high = _span(low, high)
    klow, khigh = math.ceil(low / step), math.floor(high / step)
    if klow > khigh:
        raise Unbuildable

    def sample(rng: random.Random) -> int:
        roll = rng.random()
        # Bounds and zero now and then: the values a server most often gets wrong.
        if roll < 0.1:
            return klow * step
        if roll < 0.2:
            return khigh * step
        return rng.randint(klow, khigh) * step

    return sample


def _number(ts: ToolSchema, node: dict) -> Sampler:
    low, high = _lower(node, False), _upper(node, False)
    low, high = _span(low, high)
    if low > high:
        raise Unbuildable
    if "multipleOf" in node:
        step = Decimal(repr(node["multipleOf"]))
        klow = math.ceil(Decimal(repr(low)) / step)
        khigh = math.floor(Decimal(repr(high)) / step)
        if klow > khigh:
            raise Unbuildable

        def stepped(rng: random.Random) -> float | int:
            for _ in range(_TRIES):
                value = rng.randint(klow, khigh) * step  # decimal: no float drift in k * step
                out = int(value) if value == value.to_integral_value() else float(value)
                if ts.valid_under(node, out):
                    return out
            raise _Miss

        return stepped
    ilow, ihigh = math.ceil(low), math.floor(high)

    def sample(rng: random.Random) -> float | int:
        roll = rng.random()
        if roll < 0.1:
            return low
        if roll < 0.2:
            return high
        if roll < 0.5 and ilow <= ihigh:
            return rng.randint(ilow, ihigh)
        value = round(rng.uniform(low, high), rng.choice((1, 2, 3, 6)))
        return value if low <= value <= high else low

    return sample


def _span(low: float | None, high: float | None) -> tuple[float, float]:
    if low is None and high is None:
        return -_REACH, _REACH
    if low is None:
        return high - _REACH, high  # type: ignore[operator]
    if high is None:
        return low, low + _REACH
    return low, high


def _text(rng: random.Random, low: int, high: int) -> str:
    size = rng.randint(low, high)
    if rng.random() < 0.2:
        return "".join(rng.choice(_ASCII + _WIDE + " ") for _ in range(size))
    return "".join(rng.choice(_ASCII) for _ in range(size))


def _string(ts: ToolSchema, node: dict) -> Sampler:
    low, high = node.get("minLength", 0), node.get("maxLength")
    if high is not None and high < low:
        raise Unbuildable
    fits = lambda s: len(s) >= low and (high is None or len(s) <= high)  # noqa: E731 - code points, as JSON Schema counts
    if "format" in node:
        fmt = node["format"]
        if fmt in _FORMATS:
            maker: Sampler = _FORMATS[fmt]
        elif fmt in FORMAT_SAMPLES:
            maker = lambda rng: FORMAT_SAMPLES[fmt]  # noqa: E731 - one known-good value
        else:
            raise Unbuildable
        if "pattern" in node:
            return _tried(lambda rng: maker(rng), lambda s: ts.valid_under(node, s))
        return _tried(maker, fits)
    if "pattern" in node:
        pattern = node["pattern"]
        try:
            tree = list(_p.parse(_ecma.translate(pattern)))
            compiled = _ecma.compiled(pattern)
        except (re.error, OverflowError, RecursionError, _ecma.PatternError) as exc:
            raise Unbuildable from exc
        fallback = [t for t in (regex_example(pattern, g) for g in (0, 1, 3, 8)) if t is not None and fits(t)]

        def matching(rng: random.Random) -> str:
            for _ in range(_TRIES):
                try:
                    text = _emit(tree, rng)
                except _Give:
                    break
                if fits(text) and compiled.search(text):
                    return text
            if fallback:
                return rng.choice(fallback)
            raise _Miss

        return matching
    top = high if high is not None else low + 2 * _SPAN
    return lambda rng: _text(rng, low, top)


def _tried(maker: Sampler, ok: Callable[[Any], bool]) -> Sampler:
    def sample(rng: random.Random) -> Any:
        for _ in range(_TRIES):
            value = maker(rng)
            if ok(value):
                return value
        raise _Miss

    return sample


# -- formats (RFC 3339 dates and times, RFC 5321 mailboxes, RFC 3986 URIs, RFC 9562 UUIDs...) ------------


def _label(rng: random.Random) -> str:
    return "".join(rng.choice(_LABEL) for _ in range(rng.randint(1, 10)))


def _host(rng: random.Random) -> str:
    # Under example.org, reserved for documentation (RFC 2606).
    return ".".join(_label(rng) for _ in range(rng.randint(1, 3))) + ".example.org"


def _date(rng: random.Random) -> str:
    return f"{rng.randint(1970, 2100):04d}-{rng.randint(1, 12):02d}-{rng.randint(1, 28):02d}"


def _time(rng: random.Random) -> str:
    zone = rng.choice(("Z", "+00:00", "+05:30", "-08:00"))
    return f"{rng.randint(0, 23):02d}:{rng.randint(0, 59):02d}:{rng.randint(0, 59):02d}{zone}"


def _uuid(rng: random.Random) -> str:
    h = f"{rng.getrandbits(128):032x}"
    # Version 4, RFC 9562 variant bits.
    return f"{h[:8]}-{h[8:12]}-4{h[13:16]}-{'89ab'[rng.randint(0, 3)]}{h[17:20]}-{h[20:32]}"


def _ipv6(rng: random.Random) -> str:
    # 2001:db8::/32 is the documentation prefix (RFC 3849).
    return "2001:db8:" + ":".join(f"{rng.getrandbits(16):x}" for _ in range(6))


_FORMATS: dict[str, Sampler] = {
    "date": _date,
    "time": _time,
    "date-time": lambda rng: f"{_date(rng)}T{_time(rng)}",
    "email": lambda rng: f"{_label(rng)}@{_host(rng)}",
    "idn-email": lambda rng: f"{_label(rng)}@{_host(rng)}",
    "uri": lambda rng: f"https://{_host(rng)}/{_label(rng)}",
    "iri": lambda rng: f"https://{_host(rng)}/{_label(rng)}",
    "uri-reference": lambda rng: f"/{_label(rng)}/{rng.randint(0, 999)}",
    "iri-reference": lambda rng: f"/{_label(rng)}/{rng.randint(0, 999)}",
    "uuid": _uuid,
    # 192.0.2.0/24, 198.51.100.0/24 and 203.0.113.0/24 are for documentation (RFC 5737).
    "ipv4": lambda rng: f"{rng.choice(('192.0.2', '198.51.100', '203.0.113'))}.{rng.randint(0, 255)}",
    "ipv6": _ipv6,
    "hostname": _host,
    "idn-hostname": _host,
}


# -- regular expressions -------------------------------------------------------------------------------


class _Give(Exception):
    """The pattern uses a construct this emitter does not handle (back references, look-arounds...)."""


_CATEGORY = {
    _c.CATEGORY_DIGIT: string.digits,
    _c.CATEGORY_NOT_DIGIT: string.ascii_letters + " -_.",
    _c.CATEGORY_SPACE: " ",
    _c.CATEGORY_NOT_SPACE: _ASCII + "-_.",
    _c.CATEGORY_WORD: _ASCII + "_",
    _c.CATEGORY_NOT_WORD: " -.,:;",
}


def _class_member(items: list, rng: random.Random) -> str:
    negate = bool(items) and items[0][0] is _c.NEGATE
    if negate:
        members = items[1:]
        for _ in range(_TRIES):
            char = rng.choice(_PRINTABLE)
            if not any(_in_item(char, op, av) for op, av in members):
                return char
        raise _Give
    op, av = rng.choice(items)
    if op is _c.LITERAL:
        return chr(av)
    if op is _c.RANGE:
        return chr(rng.randint(av[0], av[1]))
    if op is _c.CATEGORY and av in _CATEGORY:
        return rng.choice(_CATEGORY[av])
    raise _Give


def _in_item(char: str, op: Any, av: Any) -> bool:
    if op is _c.LITERAL:
        return ord(char) == av
    if op is _c.RANGE:
        return av[0] <= ord(char) <= av[1]
    if op is _c.CATEGORY and av in _CATEGORY:
        return re.fullmatch({_c.CATEGORY_DIGIT: r"\d", _c.CATEGORY_NOT_DIGIT: r"\D", _c.CATEGORY_SPACE: r"\s",
                             _c.CATEGORY_NOT_SPACE: r"\S", _c.CATEGORY_WORD: r"\w", _c.CATEGORY_NOT_WORD: r"\W"}[av],
                            char) is not None  # fmt: skip
    raise _Give


def _emit(tokens: list, rng: random.Random) -> str:
    out = []
    for op, av in tokens:
        if op is _c.LITERAL:
            out.append(chr(av))
        elif op is _c.NOT_LITERAL:
            out.append(next(c for c in rng.sample(_ASCII, 3) if ord(c) != av))
        elif op is _c.ANY:
            out.append(rng.choice(_ASCII))
        elif op in (_c.AT, _c.ASSERT, _c.ASSERT_NOT):  # anchors and look-arounds emit nothing; the match is confirmed after
            continue
        elif op is _c.IN:
            out.append(_class_member(av, rng))
        elif op in (_c.MAX_REPEAT, _c.MIN_REPEAT):
            low, high, sub = av
            top = low + _SPAN if high == _c.MAXREPEAT else min(high, low + _SPAN)
            sub = list(sub)
            out.extend(_emit(sub, rng) for _ in range(rng.randint(low, top)))
        elif op is _c.SUBPATTERN:
            out.append(_emit(list(av[-1]), rng))
        elif op is _c.BRANCH:
            out.append(_emit(list(rng.choice(av[1])), rng))
        else:
            raise _Give
    return "".join(out)


# -- containers ----------------------------------------------------------------------------------------


def _array(ts: ToolSchema, node: dict) -> Sampler:
    prefix_nodes = node.get("prefixItems") or (node["items"] if isinstance(node.get("items"), list) else [])
    rest = node.get("items") if not isinstance(node.get("items"), list) else node.get("additionalItems", True)
    if rest is None:
        rest = True
    prefix = [sampler_for(ts, s) for s in prefix_nodes]
    tail = sampler_for(ts, rest) if rest is not False else None
    low, high = node.get("minItems", 0), node.get("maxItems")
    if high is None:
        high = max(low, len(prefix)) + _SPAN
    if tail is None:
        high = min(high, len(prefix))
    if low > high:
        raise Unbuildable
    unique = bool(node.get("uniqueItems"))

    def sample(rng: random.Random) -> list:
        size = rng.randint(low, high)
        out = [make(rng) for make in prefix[:size]]
        keys = {canonical_dumps(v) for v in out} if unique else set()
        misses = 0
        while len(out) < size:
            try:
                value = tail(rng)  # type: ignore[misc]
            except (_Miss, Unbuildable):
                if len(out) >= low:
                    break  # a shorter array is still valid (an item schema nothing satisfies allows only [])
                raise
            if unique:
                key = canonical_dumps(value)
                if key in keys:
                    misses += 1
                    if misses > 4 * size + 8:
                        if len(out) >= low:
                            break  # fewer distinct items exist than drawn for: keep the shorter array
                        raise _Miss
                    continue
                keys.add(key)
            out.append(value)
        return out

    return sample


def _object(ts: ToolSchema, node: dict) -> Sampler:
    props: dict[str, Any] = node.get("properties", {})
    required = [n for n in dict.fromkeys(node.get("required", []))]
    ap = node.get("additionalProperties", True)
    depends = {k: v for k, v in {**(node.get("dependencies") or {}), **(node.get("dependentRequired") or {})}.items()
               if isinstance(v, list)}  # fmt: skip
    low, high = node.get("minProperties", 0), node.get("maxProperties")

    def schema_of(name: str) -> Any:
        if name in props:
            return props[name]
        return {} if ap is True else ap

    for name in required:
        if schema_of(name) is False:
            raise Unbuildable
    values = {name: sampler_for(ts, schema_of(name)) for name in dict.fromkeys([*required, *props, *(n for v in depends.values() for n in v)])}
    optional = [n for n in props if n not in required]
    extras: list[tuple[Sampler, Sampler]] = []
    for pattern, sub in (node.get("patternProperties") or {}).items():
        extras.append((sampler_for(ts, {"type": "string", "pattern": pattern}), sampler_for(ts, sub)))
    names_node = node.get("propertyNames")
    if isinstance(ap, dict) or (ap is True and names_node is not None):
        keys = sampler_for(ts, {"allOf": [{"type": "string"}, names_node]}) if names_node is not None else _key
        extras.append((keys, sampler_for(ts, {} if ap is True else ap)))

    def sample(rng: random.Random) -> dict:
        out = {name: values[name](rng) for name in required}
        for name in optional:
            if rng.random() < 0.5:
                try:
                    out[name] = values[name](rng)
                except (_Miss, Unbuildable):
                    continue  # optional: an unsatisfiable or unlucky property is left out
        for keys, value in extras:
            if rng.random() < 0.3:
                for _ in range(rng.randint(1, 2)):
                    key = keys(rng)
                    if isinstance(key, str) and key not in out:
                        out[key] = value(rng)
        for trigger, needs in depends.items():
            if trigger in out:
                for name in needs:
                    if name not in out:
                        out[name] = values[name](rng)
        spare = [n for n in optional if n not in out]
        while len(out) < low and spare:
            name = spare.pop(rng.randrange(len(spare)))
            out[name] = values[name](rng)
        if high is not None and len(out) > high:
            keep = set(required) | {n for t, needs in depends.items() if t in out for n in needs}
            for name in [n for n in out if n not in keep]:
                if len(out) <= high:
                    break
                del out[name]
        return out

    return sample


def _key(rng: random.Random) -> str:
    return "".join(rng.choice(_KEY_CHARS) for _ in range(rng.randint(1, 8)))


_TYPES: dict[str, Callable[[ToolSchema, dict], Sampler]] = {
    "null": lambda ts, node: lambda rng: None,
    "boolean": lambda ts, node: lambda rng: rng.random() < 0.5,
    "integer": _integer,
    "number": _number,
    "string": _string,
    "array": _array,
    "object": _object,
}
