"""``arguments()``: every drawn value is valid, there is variety, and it shrinks to the smallest object.

``arguments()`` filters by the oracle only where the compiled model is not valid by construction
(``Shape.exact``), so this test holds every drawn value of every schema of both corpora to an
independent reference (``jsonschema`` with ECMA-262 patterns: gen_reference.py; JSON Schema 2020-12,
draft-07 and 2019-09 as declared). Shrinking: hypothesis' ``find`` (documented behaviour: the minimal
example), common practice for what "smallest" means.
"""

from __future__ import annotations

import json

import pytest
from hypothesis import find, settings

from feeler.generate import arguments
from feeler.generate._strategies import draws
from gen_reference import reference_validator
from keyword_corpus import CORPUS as KEYWORD_CORPUS
from test_gen_oracle import CORPUS

SCHEMAS = {p.stem: json.loads(p.read_text(encoding="utf-8")) for p in CORPUS} | {e.name: e.schema for e in KEYWORD_CORPUS}


@pytest.mark.parametrize("name", sorted(SCHEMAS))
def test_every_drawn_value_is_valid(name: str) -> None:
    schema = SCHEMAS[name]
    oracle = reference_validator(schema)
    values = draws(arguments(schema), 40, seed=11)
    assert values
    for value in values:
        assert oracle.is_valid(value), (value, [e.message for e in oracle.iter_errors(value)])
    # Variety: not one value over and over.
    assert len({json.dumps(v, sort_keys=True) for v in values}) > 1 or len(values) == 1


def test_optional_properties_come_and_go() -> None:
    schema = {"type": "object", "properties": {f"p{i}": {"type": "integer", "minimum": i} for i in range(8)}, "required": ["p0"]}
    values = draws(arguments(schema), 60, seed=3)
    sizes = {len(v) for v in values}
    assert min(sizes) < 4 < max(sizes), sizes


def test_shrinks_the_values_too() -> None:
    # The smallest object with a property the predicate needs: required ones, that one, each at its smallest.
    schema = {"type": "object", "properties": {"name": {"type": "string", "minLength": 2}, "age": {"type": "integer", "minimum": 18},
                                               "tags": {"type": "array", "items": {"type": "string"}}}, "required": ["name"]}  # fmt: skip
    smallest = find(arguments(schema), lambda v: "age" in v, settings=settings(database=None, max_examples=200))
    assert smallest == {"name": "aa", "age": 18}
