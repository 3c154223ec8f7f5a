"""The hypothesis strategy behind :func:`feeler.generate.arguments`: few choices per example, shrinking
towards the smallest object.

hypothesis pays its engine cost per choice (each integer, each character, each "is this optional
property present?"), so a strategy assembled choice by choice from the schema is slow. Here each shape
of the compiled model (:mod:`._model`) is drawn with as few choices as keep shrinking meaningful:

- an object: one integer, whose low bits say which optional properties are present and whose high bits
  seed the values; it shrinks to 0: the seed first (every value the smallest one the builders make,
  :func:`._build.example`), then the bits (the required properties only); other seeds draw the values
  from the seeded samplers (:mod:`._fast`), dependencies, extra keys and property counts included
  (``ObjectPlan``);
- a string or an array: one seed (0: the smallest value; others: the sampler);
- integers, numbers, booleans, null, ``enum``/``const``: hypothesis' own strategies (one choice, exact shrinking);
- ``anyOf``/``oneOf``: one choice of branch (it shrinks to the first); ``if``: one choice of outcome.

Values are valid by construction where the shape is exact (:attr:`~._model.Shape.exact`); elsewhere
they are filtered by the shape's oracle. Only public hypothesis strategies are used.
"""

from __future__ import annotations

import copy
import random
from typing import Any

from hypothesis import strategies as st

from feeler._json import json_type
from feeler.generate._build import example
from feeler.generate._fast import Miss, ObjectPlan, typed_sampler
from feeler.generate._model import Shape
from feeler.generate._strategies import TYPE_STRATEGIES, Unbuildable, strategy_for

__all__ = ["arguments_strategy"]

_SEEDS = st.integers(0, 2**32 - 1)
#: Stands for "no value this time" inside a map; filtered out right after.
_NONE = object()
#: Types drawn with hypothesis' own strategies (one choice each, and they shrink exactly).
_NATIVE = ("integer", "number", "boolean", "null")


def arguments_strategy(shape: Shape) -> st.SearchStrategy[Any]:
    """The strategy of values valid against *shape* (made once per shape and kept on it)."""
    found = shape.__dict__.get("_arguments")
    if found is None:
        found = shape.__dict__["_arguments"] = _strategy(shape)
    return found


def _some(strategy: st.SearchStrategy[Any]) -> st.SearchStrategy[Any]:
    return strategy.filter(lambda v: v is not _NONE)


def _checked(shape: Shape, strategy: st.SearchStrategy[Any]) -> st.SearchStrategy[Any]:
    return strategy if shape.exact else strategy.filter(shape.accepts)


def _strategy(shape: Shape) -> st.SearchStrategy[Any]:
    if shape.never:
        return st.nothing()
    if not shape.parts or shape.members is not None:
        return strategy_for(shape)
    for keyword in ("anyOf", "oneOf"):
        groups = shape.groups(keyword)
        if groups:
            location, branches = groups[0]
            return _checked(shape, st.one_of([arguments_strategy(shape.choose(location, b)) for b in branches]))
    if shape.conditionals:
        location, if_, then, else_ = shape.conditionals[0]
        outcomes = [arguments_strategy(shape.choose(location, if_, then)), arguments_strategy(shape.choose(location, else_))]
        return _checked(shape, st.one_of(outcomes))
    parts = []
    for kind in shape.types:
        try:
            parts.append(TYPE_STRATEGIES[kind](shape) if kind in _NATIVE else _object(shape) if kind == "object" else _seeded(shape, kind))
        except Unbuildable:
            continue
    return _checked(shape, st.one_of(parts)) if parts else st.nothing()


def _smallest(shape: Shape, kind: str | None = None) -> Any:
    """The smallest value the builders make for *shape* (of JSON type *kind*), or _NONE."""
    try:
        value = example(shape)
    except Unbuildable:
        return _NONE
    if kind is not None and json_type(value) != kind and not (kind == "number" and json_type(value) == "integer"):
        return _NONE
    return value


def _seeded(shape: Shape, kind: str) -> st.SearchStrategy[Any]:
    """One seed: 0 gives the smallest value, any other a sampled one."""
    sample = typed_sampler(shape, kind)

    def make(seed: int) -> Any:
        if seed == 0:
            smallest = _smallest(shape, kind)
            if smallest is not _NONE:
                return smallest
        try:
            return sample(random.Random(seed))
        except (Miss, Unbuildable):
            return _NONE

    return _some(_SEEDS.map(make))


def _object(shape: Shape) -> st.SearchStrategy[dict]:
    """Which optional properties (one integer, bit i for the i-th) and the values (one seed)."""
    plan = ObjectPlan(shape)
    optional = plan.optional
    smallest: dict[str, Any] = {}

    def value(name: str, seed: int, rng: random.Random) -> Any:
        if seed:
            try:
                return plan.values[name](rng)
            except (Miss, Unbuildable):
                pass  # this draw missed: the smallest value instead
        if name not in smallest:
            smallest[name] = _smallest(shape.for_key(name))
        return copy.deepcopy(smallest[name])

    def make(choice: tuple[int, int]) -> Any:
        mask, seed = choice
        rng = random.Random(seed)
        out: dict[str, Any] = {}
        for name in plan.required:
            out[name] = value(name, seed, rng)
        for i, name in enumerate(optional):
            if mask >> i & 1:
                out[name] = value(name, seed, rng)
        if any(v is _NONE for v in out.values()):
            return _NONE
        try:
            return plan.finish(out, rng, extras=seed != 0)
        except (Miss, Unbuildable):
            return _NONE

    # One integer: the low bits choose the optional properties, the high bits are the seed. hypothesis shrinks
    # an integer towards 0, the high bits first: the values to their smallest, then fewer properties.
    width = len(optional)
    choices = st.integers(0, 2 ** (width + 32) - 1).map(lambda n: (n & ((1 << width) - 1), n >> width))
    return _some(choices.map(make))
