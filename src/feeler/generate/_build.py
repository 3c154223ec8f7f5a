"""Build one valid value for a shape by construction: the smallest, or the fullest.

Deterministic and fast (no search): numbers sit on their lower bound, strings are as short as allowed,
objects carry the required properties (``full=True``: every declared property), arrays the fewest
items (``full=True``: at least one). It reads the compiled model (:mod:`._model`). Every result is
checked with the shape's oracle; where construction does not satisfy the shape (``not``, an ``else``
value that meets ``if``...), :func:`example` falls back to the seeded sampler (:mod:`._fast`) and then
to a hypothesis search (:mod:`._strategies`).
"""

from __future__ import annotations

import copy
import math
import random
from collections.abc import Callable, Iterator
from decimal import Decimal
from typing import Any

from feeler._json import canonical_dumps
from feeler.generate._ecma import SlowPattern
from feeler.generate._fast import sampler_for
from feeler.generate._formats import FORMAT_SAMPLES
from feeler.generate._model import Shape
from feeler.generate._regex import regex_example
from feeler.generate._strategies import Unbuildable, searched_example, searched_examples

__all__ = ["Unbuildable", "build", "example", "find_value", "multiple_at_least", "variants"]

#: Most nested build calls for one value (a guard; recursion is bounded by the model's cut).
_MAX_NESTING = 200
#: Draws of the seeded sampler in :func:`find_value` before the hypothesis search.
_DRAWS = 60


def multiple_at_least(low: float, step: float, exclusive: bool = False) -> float:
    """The smallest multiple of *step* that is >= *low* (> if *exclusive*), computed in decimal to avoid drift."""
    d_low, d_step = Decimal(repr(low)), Decimal(repr(step))
    k = (d_low / d_step).to_integral_value(rounding="ROUND_CEILING")
    if exclusive and k * d_step <= d_low:
        k += 1
    value = k * d_step
    return int(value) if value == value.to_integral_value() else float(value)


def build(shape: Shape, full: bool = False, _nesting: int = 0) -> Any:
    """One value for *shape* by construction; the caller checks it with the oracle.

    :raises Unbuildable: the shape needs search (``not``, a value that must miss ``if``...).
    """
    if shape.never or _nesting > _MAX_NESTING:
        raise Unbuildable
    if not shape.parts:
        return None
    nest = _nesting + 1
    if shape.members is not None:
        if not shape.members:
            raise Unbuildable
        return copy.deepcopy(shape.members[0])
    for keyword in ("anyOf", "oneOf"):
        groups = shape.groups(keyword)
        if groups:
            location, branches = groups[0]
            for branch in branches:
                try:
                    value = build(shape.choose(location, branch), full, nest)
                except Unbuildable:
                    continue
                if shape.accepts(value):
                    return value
            raise Unbuildable
    if shape.conditionals:
        # Build without the condition, then again with the outcome the condition picks for that value.
        location, if_, then, else_ = shape.conditionals[0]
        value = build(shape.choose(location), full, nest)
        met = shape.model.ts.valid_under(if_.raw, value)
        return build(shape.choose(location, if_, then) if met else shape.choose(location, else_), full, nest)
    # Prefer the type that says most about the shape, e.g. object over null for an "object or null".
    for kind in ("object", "array", "string", "integer", "number", "boolean", "null"):
        if kind in shape.types:
            try:
                return _BUILDERS[kind](shape, full, nest)
            except Unbuildable:
                continue
    raise Unbuildable


def _number(shape: Shape, integer: bool) -> Any:
    low, _ = shape.bound("low", integer)
    high, _ = shape.bound("high", integer)
    start = low if low is not None else (min(0, high) if high is not None else 0)
    if shape.steps:
        steps = shape.steps
        step = math.lcm(*(int(s) for s in steps)) if all(float(s).is_integer() for s in steps) else steps[0]
        if low is not None:
            start = multiple_at_least(start, step)
        elif high is not None and start < 0:
            start = -multiple_at_least(-start, step)
        else:
            start = 0
        if integer and not float(start).is_integer():
            raise Unbuildable
    elif not integer and not float(start).is_integer() and (high is None or math.ceil(start) <= high):
        # An exclusive or fractional bound: the smallest whole number inside it reads like real data (a
        # base case the server should accept); the value just past the bound is a boundary case's job.
        start = math.ceil(start)
    if high is not None and start > high:
        raise Unbuildable
    return int(start) if integer else start


def _string(shape: Shape, full: bool, nest: int) -> str:
    low, high = shape.min_length, shape.max_length
    if shape.formats and shape.formats[0] in FORMAT_SAMPLES:
        text: str | None = FORMAT_SAMPLES[shape.formats[0]]
    elif shape.patterns:
        text = None
        for grow in (0, 1, 3, 8):
            text = regex_example(shape.patterns[0], grow)
            if text is None or len(text) >= low:
                break
        if text is None:
            raise Unbuildable
    else:
        text = "a" * low
    if len(text) < low or (high is not None and len(text) > high):
        raise Unbuildable
    return text


def _array(shape: Shape, full: bool, nest: int) -> list:
    prefix, rest = shape.prefix, shape.rest
    low = shape.min_items
    contained = shape.contains[0] if shape.contains else None
    if contained is not None:
        low = max(low, contained[1])
    count = max(low, (max(1, len(prefix)) if full else 0))
    if shape.max_items is not None:
        count = min(count, shape.max_items)
    if rest.never:
        count = min(count, len(prefix))
    out = [example(s, full, nest) for s in prefix[:count]]
    needed = count - len(out)
    if needed > 0:
        item = rest.merge(contained[0]) if contained is not None else rest
        if shape.unique:
            out.extend(variants(item, needed, full))
        else:
            one = example(item, full, nest)
            out.extend(copy.deepcopy(one) for _ in range(needed))
    return out


def _object(shape: Shape, full: bool, nest: int) -> dict:
    names = list(dict.fromkeys([*shape.required, *(shape.declared if full else [])]))
    if shape.max_props is not None:
        names = names[: max(len(shape.required), shape.max_props)]
    out: dict[str, Any] = {}
    for name in names:
        value_shape = shape.for_key(name)
        if name not in shape.required and value_shape.never:
            continue
        out[name] = example(value_shape, full, nest)
    for trigger, needs in shape.depends.items():
        if trigger in out:
            for name in needs:
                if name not in out:
                    out[name] = example(shape.for_key(name), full, nest)
    spare = iter([n for n in shape.declared if n not in out] + [f"extra{i}" for i in range(64)])
    while len(out) < shape.min_props:
        name = next(spare, None)
        if name is None:
            raise Unbuildable
        if not shape.for_key(name).never:
            out[name] = example(shape.for_key(name), full, nest)
    return out


_BUILDERS: dict[str, Callable[[Shape, bool, int], Any]] = {
    "null": lambda shape, full, nest: None,
    "boolean": lambda shape, full, nest: False,
    "integer": lambda shape, full, nest: _number(shape, True),
    "number": lambda shape, full, nest: _number(shape, False),
    "string": _string,
    "array": _array,
    "object": _object,
}


def example(shape: Shape, full: bool = False, _nesting: int = 0) -> Any:
    """A value valid against *shape* (checked by its oracle): by construction, else by search.

    :raises Unbuildable: neither construction nor a bounded search found a valid value.
    """
    # Kept on the shape (deterministic): a shape met again, above all one that has no value, costs nothing.
    key = "_example_full" if full else "_example"
    if key not in shape.__dict__:
        found: tuple[Any] | None
        try:
            value = build(shape, full, _nesting)
            if not shape.accepts(value):
                raise Unbuildable
            found = (value,)
        except Unbuildable:
            try:
                found = (find_value(shape),)
            except Unbuildable:
                found = None
        shape.__dict__[key] = found
    found = shape.__dict__[key]
    if found is None:
        raise Unbuildable
    return copy.deepcopy(found[0])


def find_value(shape: Shape, want: Callable[[Any], bool] | None = None, seed: int = 0, search: bool = True) -> Any:
    """A value *shape* accepts (and *want* too, when given): construction, then the seeded sampler, then
    (with *search*) a bounded hypothesis search; deterministic.

    :raises Unbuildable: nothing was found within the budget.
    """
    ok = (lambda v: shape.accepts(v) and want(v)) if want is not None else shape.accepts
    if shape.never:
        raise Unbuildable
    for full in (False, True):
        try:
            value = build(shape, full)
        except Unbuildable:
            continue
        if ok(value):
            return value
    # Without a search, the sampler must not reach for its own hypothesis pool either.
    rng, sample = random.Random(seed), sampler_for(shape, pool=search)
    for _ in range(_DRAWS):
        try:
            value = sample(rng)
        except SlowPattern:
            raise  # the pattern, not this draw: every later draw would fail the same way
        except Exception:  # noqa: BLE001 - a sampler miss: draw again
            continue
        if ok(value):
            return value
    if not search:
        raise Unbuildable
    if want is None:
        return searched_example(shape)
    for value in searched_examples(shape, _DRAWS):
        if ok(value):
            return value
    raise Unbuildable


def variants(shape: Shape, count: int, full: bool = False) -> list[Any]:
    """*count* distinct valid values for *shape* (for ``uniqueItems``), or :class:`Unbuildable`."""
    seen: dict[str, Any] = {}
    for value in _candidates(shape, full):
        key = canonical_dumps(value)
        if key not in seen and shape.accepts(value):
            seen[key] = value
            if len(seen) == count:
                return list(seen.values())
    raise Unbuildable


def _candidates(shape: Shape, full: bool) -> Iterator[Any]:
    if shape.members is not None:
        yield from shape.members
        return
    try:
        base = build(shape, full)
    except Unbuildable:
        base = None
    if base is not None:
        yield base
    if isinstance(base, bool):
        yield not base
    elif isinstance(base, (int, float)):
        step = shape.steps[0] if shape.steps else 1
        for i in range(1, 200):
            yield base + i * step
            yield base - i * step
    elif isinstance(base, str):
        for i in range(200):
            yield base + str(i)
            yield base + "abcdefghijklmnopqrstuvwxyz"[i % 26] * (1 + i // 26)
    elif isinstance(base, dict):
        for key in list(base):
            for alt in _candidates(shape.for_key(key), full):
                if alt != base[key]:
                    yield {**base, key: alt}
                    break
    rng, sample = random.Random(1), sampler_for(shape)
    for _ in range(_DRAWS):
        try:
            yield sample(rng)
        except SlowPattern:
            raise  # the pattern, not this draw: every later draw would fail the same way
        except Exception:  # noqa: BLE001 - a sampler miss: draw again
            continue
    yield from searched_examples(shape)
