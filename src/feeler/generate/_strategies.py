"""Hypothesis strategies of valid values, built by construction from the compiled model (:mod:`._model`).

Each :class:`~._model.Shape` becomes one strategy assembled from hypothesis' public strategies: typed
scalars with their bounds, one pattern or one format, arrays of the item shapes (``contains`` items
added), objects with the required properties, any subset of the others and a few pattern or extra
keys, ``anyOf``/``oneOf`` as a choice of branches merged into the rest, ``if`` as a choice of the two
outcomes. A shape whose keywords are all satisfied by construction (:attr:`~._model.Shape.exact`) is
not filtered at all; any other is filtered by its own oracle (:meth:`~._model.Shape.accepts`), so every
value is valid. Only public hypothesis strategies are used (no hypothesis-jsonschema), so any
hypothesis from 6.100 on works, the newest included.
"""

from __future__ import annotations

import functools
import math
import re
from collections.abc import Callable, Iterator
from typing import Any

from hypothesis import HealthCheck, Phase, find, given, reject, settings
from hypothesis.control import currently_in_test_context
from hypothesis import seed as hypothesis_seed
from hypothesis import strategies as st
from hypothesis.errors import InvalidArgument, NoSuchExample, Unsatisfiable

from feeler._json import canonical_dumps
from feeler.generate import _ecma
from feeler.generate._formats import format_strategies
from feeler.generate._model import TYPES, Shape
from feeler.generate._regex import _c, _p

__all__ = ["TYPE_STRATEGIES", "Unbuildable", "draws", "pattern_strings", "searched_example", "searched_examples", "strategy_for"]

#: Unbounded sizes are capped this far above the lower bound: tool arguments are small.
_SPAN = 4
_FORMATS = format_strategies()
_QUIET = list(HealthCheck)


class Unbuildable(Exception):
    """No value can be made for this shape by construction or a bounded search."""


def strategy_for(shape: Shape) -> st.SearchStrategy[Any]:
    """A strategy of values valid against *shape* (made once per shape)."""
    found = shape.__dict__.get("_strategy")
    if found is None:
        # A deferred strategy first: a recursive shape (within the recursion depth) refers to itself.
        shape.__dict__["_strategy"] = st.deferred(lambda: shape.__dict__["_built_strategy"])
        shape.__dict__["_built_strategy"] = _strategy(shape)
        found = shape.__dict__["_strategy"] = shape.__dict__["_built_strategy"]
    return found


def _strategy(shape: Shape) -> st.SearchStrategy[Any]:
    if shape.never:
        return st.nothing()
    if not shape.parts:
        return _json_values()
    if shape.members is not None:
        return st.sampled_from(shape.members) if shape.members else st.nothing()
    for keyword in ("anyOf", "oneOf"):
        groups = shape.groups(keyword)
        if groups:
            location, branches = groups[0]
            choices = [strategy_for(shape.choose(location, b)) for b in branches]
            return _checked(shape, st.one_of(choices)) if choices else st.nothing()
    if shape.conditionals:
        # 2020-12 core 10.2.2: a value passes through "then" when it meets "if", else through "else".
        location, if_, then, else_ = shape.conditionals[0]
        outcomes = [strategy_for(shape.choose(location, if_, then)), strategy_for(shape.choose(location, else_))]
        return _checked(shape, st.one_of(outcomes))
    parts = [TYPE_STRATEGIES[kind](shape) for kind in shape.types]
    return _checked(shape, st.one_of(parts))


def _checked(shape: Shape, strategy: st.SearchStrategy[Any]) -> st.SearchStrategy[Any]:
    return strategy if shape.exact else strategy.filter(shape.accepts)


def _integers(shape: Shape) -> st.SearchStrategy[int]:
    low, _ = shape.bound("low", True)
    high, _ = shape.bound("high", True)
    steps = shape.steps
    if low is not None and high is not None and low > high:
        return st.nothing()  # crossed bounds: no integer (a contradiction outside the required places)
    if not steps or not all(float(s).is_integer() for s in steps):
        return st.integers(low, high)
    step = math.lcm(*(int(s) for s in steps)) or 1
    klow = None if low is None else math.ceil(low / step)
    khigh = None if high is None else math.floor(high / step)
    if klow is not None and khigh is not None and klow > khigh:
        return st.nothing()
    return st.integers(klow, khigh).map(lambda k: k * step)


def _numbers(shape: Shape) -> st.SearchStrategy[float]:
    low, _ = shape.bound("low", False)
    high, _ = shape.bound("high", False)
    if low is not None and high is not None and low > high:
        return st.nothing()
    if shape.steps:
        step = shape.steps[0]
        klow = None if low is None else math.ceil(low / step)
        khigh = None if high is None else math.floor(high / step)
        if klow is not None and khigh is not None and klow > khigh:
            return st.nothing()
        return st.integers(klow, khigh).map(lambda k: k * step)
    ilow = None if low is None else math.ceil(low)
    ihigh = None if high is None else math.floor(high)
    floats = st.floats(low, high, allow_nan=False, allow_infinity=False)
    if ilow is not None and ihigh is not None and ilow > ihigh:
        return floats
    return st.one_of(st.integers(ilow, ihigh), floats)


def _strings(shape: Shape) -> st.SearchStrategy[str]:
    low, high = shape.min_length, shape.max_length
    if high is not None and low > high:
        return st.nothing()
    fits = lambda s: len(s) >= low and (high is None or len(s) <= high)  # noqa: E731 - code points, as JSON Schema counts
    if shape.formats and shape.formats[0] in _FORMATS:
        return _FORMATS[shape.formats[0]].filter(fits)
    if shape.patterns:
        # The pattern translated to Python with its ECMA-262 meaning (2020-12 validation section 6.3.3).
        return pattern_strings(shape.patterns[0]).filter(fits)
    top = high if high is not None else low + 2 * _SPAN
    return st.text(st.characters(codec="utf-8"), min_size=low, max_size=max(low, top))


#: What a class that is a Python category stands for (translate() writes ``[^]`` as ``[\s\S]``).
_CATEGORIES = {_c.CATEGORY_SPACE: re.compile(r"\s"), _c.CATEGORY_NOT_SPACE: re.compile(r"\S"),
               _c.CATEGORY_DIGIT: re.compile(r"\d"), _c.CATEGORY_NOT_DIGIT: re.compile(r"\D"),
               _c.CATEGORY_WORD: re.compile(r"\w"), _c.CATEGORY_NOT_WORD: re.compile(r"\W")}  # fmt: skip
_PRINTABLE = (32, 126)


def _class_strategy(items: list, chars: st.SearchStrategy[str], ascii: bool) -> st.SearchStrategy[str]:
    """One character of a parsed class (``[...]``), drawn from its members (under *ascii*, printable
    ASCII members when it has any)."""
    negated = bool(items) and items[0][0] is _c.NEGATE
    members = items[1:] if negated else items

    def inside(char: str) -> bool:
        code = ord(char)
        return any(code == av if op is _c.LITERAL else av[0] <= code <= av[1] if op is _c.RANGE
                   else bool(_CATEGORIES[av].match(char)) for op, av in members)  # fmt: skip

    if negated:
        return chars.filter(lambda c: not inside(c))
    spans = [(av, av) if op is _c.LITERAL else av if op is _c.RANGE else (0, 0x10FFFF) for op, av in members]
    printable = [(max(lo, _PRINTABLE[0]), min(hi, _PRINTABLE[1])) for lo, hi in spans]
    if ascii and any(lo <= hi for lo, hi in printable):
        spans = printable  # a class with no printable ASCII member keeps its own members
    parts = [st.characters(min_codepoint=lo, max_codepoint=hi, codec="utf-8") for lo, hi in spans if lo <= hi]
    return st.one_of(parts).filter(inside)


def pattern_strings(pattern: str, ascii: bool = False) -> st.SearchStrategy[str]:
    """Strings ECMA-262 *pattern* matches: drawn from its parse tree as hypothesis' ``from_regex`` draws
    them (a repeat's count as a list's size, a branch, each class member), with random text around an
    unanchored match now and then, and confirmed by :func:`_ecma.search`. (``from_regex`` confirms its
    draws with Python's ``re``, which no time budget can stop: a schema's pattern never goes there.)

    :param ascii: printable ASCII where the pattern leaves a choice (property names).
    """
    tree = list(_p.parse(_ecma.translate(pattern)))
    chars = st.characters(min_codepoint=_PRINTABLE[0], max_codepoint=_PRINTABLE[1]) if ascii else st.characters(codec="utf-8")
    classes: dict[int, st.SearchStrategy[str]] = {}
    pads = [st.just("") if tree and tree[0] == (_c.AT, _c.AT_BEGINNING) else st.text(chars, max_size=4),
            st.just("") if tree and tree[-1] == (_c.AT, _c.AT_END_STRING) else st.text(chars, max_size=4)]  # fmt: skip

    def drawn(draw: Any, tokens: Any, groups: dict[Any, str]) -> str:
        out = []
        for op, av in tokens:
            if op is _c.LITERAL:
                out.append(chr(av))
            elif op is _c.IN:
                if id(av) not in classes:
                    classes[id(av)] = _class_strategy(av, chars, ascii)
                out.append(draw(classes[id(av)]))
            elif op in (_c.NOT_LITERAL, _c.ANY):
                out.append(draw(chars.filter(lambda c, no=av if op is _c.NOT_LITERAL else 10: ord(c) != no)))
            elif op in (_c.MAX_REPEAT, _c.MIN_REPEAT):
                low, high, body = av
                rounds = draw(st.lists(st.none(), min_size=low, max_size=None if high == _c.MAXREPEAT else high))
                out.extend(drawn(draw, body, groups) for _ in rounds)
            elif op is _c.SUBPATTERN:
                groups[av[0]] = text = drawn(draw, av[-1], groups)
                out.append(text)
            elif op is _c.BRANCH:
                out.append(drawn(draw, draw(st.sampled_from(av[1])), groups))
            elif op is _c.GROUPREF:
                out.append(groups.get(av, ""))
            elif op not in (_c.AT, _c.ASSERT, _c.ASSERT_NOT):  # anchors and look-arounds: the match is confirmed after
                reject()
        return "".join(out)

    @st.composite
    def matching(draw: Any) -> str:
        text = drawn(draw, tree, {})
        left, right = draw(pads[0]), draw(pads[1])
        if left and _ecma.search(pattern, left + text):
            text = left + text
        if right and _ecma.search(pattern, text + right):
            text += right
        return text

    return matching().filter(functools.partial(_ecma.search, pattern))


def _arrays(shape: Shape) -> st.SearchStrategy[list]:
    prefix, rest = shape.prefix, shape.rest
    low, high = shape.min_items, shape.max_items
    if rest.never:
        high = len(prefix) if high is None else min(high, len(prefix))
    if high is None:
        high = max(low, len(prefix)) + _SPAN
    if low > high:
        return st.nothing()
    unique = canonical_dumps if shape.unique else None
    heads = [st.tuples(*(strategy_for(s) for s in prefix[:n])).map(list) for n in range(min(len(prefix), high) + 1) if n >= min(low, len(prefix))]
    head = st.one_of(heads)
    tail_low, tail_high = max(0, low - len(prefix)), max(0, high - len(prefix))
    if shape.unique and rest.members is not None and len(rest.members) < tail_low:
        return st.nothing()  # fewer distinct values than unique items needed
    tail = st.lists(strategy_for(rest), min_size=tail_low, max_size=tail_high, unique_by=unique) if not rest.never else st.just([])

    def join(h: list, t: list) -> list:
        return h + t if len(h) == len(prefix) else h

    whole = st.builds(join, head, tail)
    for contained, low_c, high_c in shape.contains[:1]:
        # At least minContains matching items (2020-12 core 10.3.1.3), after the prefix.
        top = max(low_c, min(high_c if high_c is not None else low_c + 1, low_c + 2))
        wanted = st.lists(strategy_for(rest.merge(contained)), min_size=low_c, max_size=top)
        whole = st.builds(lambda w, v: (v + w)[: high if high is not None else None], wanted, whole)
    if shape.unique:
        whole = whole.filter(lambda v: len({canonical_dumps(x) for x in v}) == len(v))
    return whole.filter(lambda v: low <= len(v))


def _objects(shape: Shape) -> st.SearchStrategy[dict]:
    """Objects with the required properties, any subset of the declared ones, and a few keys that
    ``patternProperties`` or ``additionalProperties`` describe; ``dependentRequired`` is filled in."""
    required = shape.required
    optional = [n for n in shape.declared if n not in required]
    fixed = st.fixed_dictionaries(
        {name: strategy_for(shape.for_key(name)) for name in required},
        optional={name: strategy_for(shape.for_key(name)) for name in optional},
    )
    extras: list[tuple[st.SearchStrategy[str], Callable[[str], Shape]]] = []
    for pattern in shape.pattern_keys:
        extras.append((pattern_strings(pattern, ascii=True), shape.for_key))
    low, high = shape.min_props, shape.max_props
    if shape.extra is not None and (shape.extra.parts or shape.names is not None or low > len(shape.declared)):
        keys = strategy_for(shape.names).filter(lambda k: isinstance(k, str)) if shape.names is not None else st.text(
            "abcdefghijklmnopqrstuvwxyz_", min_size=1, max_size=8)
        extras.append((keys, shape.for_key))
    depends = shape.depends
    most = max(2, low)

    @st.composite
    def build(draw: Any) -> dict:
        out = draw(fixed)
        for keys, value_shape in extras:
            for key in draw(st.lists(keys, max_size=most, unique=True)):
                target = value_shape(key)
                if key not in out and not target.never:
                    out[key] = draw(strategy_for(target))
        for trigger, needs in depends.items():
            if trigger in out:
                for name in needs:
                    if name not in out:
                        out[name] = draw(strategy_for(shape.for_key(name)))
        return out

    if low == 0 and high is None:
        return build()
    return build().filter(lambda v: len(v) >= low and (high is None or len(v) <= high))


def _json_values() -> st.SearchStrategy[Any]:
    scalars = st.none() | st.booleans() | st.integers(-(2**31), 2**31) | st.text(max_size=8)
    return st.recursive(scalars, lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=5), inner, max_size=3), max_leaves=6)


TYPE_STRATEGIES: dict[str, Callable[[Shape], st.SearchStrategy[Any]]] = {
    "null": lambda shape: st.none(),
    "boolean": lambda shape: st.booleans(),
    "integer": _integers,
    "number": _numbers,
    "string": _strings,
    "array": _arrays,
    "object": _objects,
}
assert set(TYPE_STRATEGIES) == set(TYPES)


def searched_example(shape: Shape) -> Any:
    """The first value hypothesis finds for *shape*; deterministic (derandomized, no database).

    :raises Unbuildable: nothing was found within the search budget, or the caller runs inside a
        hypothesis test (hypothesis refuses a search nested in ``@given``; the caller then has only
        construction and the seeded sampler).
    """
    if currently_in_test_context():
        raise Unbuildable("no hypothesis search inside a hypothesis test")
    try:
        return find(
            strategy_for(shape),
            lambda _: True,
            # No shrink phase: shrinking a rare find can take seconds; the generate phase alone is
            # still deterministic under derandomize and already tends to small values.
            settings=settings(database=None, derandomize=True, max_examples=200, phases=[Phase.generate],
                              suppress_health_check=_QUIET, deadline=None),  # fmt: skip
        )
    except (NoSuchExample, Unsatisfiable, InvalidArgument) as exc:  # InvalidArgument: a strategy that cannot exist
        raise Unbuildable from exc


def searched_examples(shape: Shape, count: int = 50) -> Iterator[Any]:
    """Up to *count* drawn values for *shape* (deterministic: a fixed seed); none inside a hypothesis test."""
    if currently_in_test_context():
        return
    try:
        yield from draws(strategy_for(shape), count, seed=0)
    except _ecma.SlowPattern:
        raise  # the schema's pattern cannot be judged: not a lack of variety
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
