"""Boundary go cases hit every bound exactly.

References: JSON Schema 2020-12 validation specification section 6.2 (minimum, maximum, exclusive
bounds, multipleOf), 6.3.1-6.3.2 (minLength/maxLength count code points, RFC 8259 characters),
6.4.1-6.4.2 (maxItems/minItems), 6.1.2-6.1.3 (enum, const), 6.5.3 (required); ``jsonschema`` as the
reference validator for every value below.
"""

from __future__ import annotations

import math
from typing import Any

import jsonschema
import pytest

from feeler.generate import go_cases


def _obj(prop: dict) -> dict:
    return {"type": "object", "properties": {"v": prop}, "required": ["v"]}


def values(schema: dict, keyword: str) -> list[Any]:
    return [c.arguments["v"] for c in go_cases(schema) if c.keyword == keyword and c.path == "$.v"]


TABLE = [
    # (property schema, keyword, expected values) — the expected values are worked out by hand.
    ({"type": "integer", "minimum": 3, "maximum": 9}, "minimum", [3]),
    ({"type": "integer", "minimum": 3, "maximum": 9}, "maximum", [9]),
    ({"type": "integer", "exclusiveMinimum": 3, "exclusiveMaximum": 9}, "exclusiveMinimum", [4]),
    ({"type": "integer", "exclusiveMinimum": 3, "exclusiveMaximum": 9}, "exclusiveMaximum", [8]),
    ({"type": "number", "exclusiveMinimum": 0.5}, "exclusiveMinimum", [math.nextafter(0.5, math.inf)]),
    ({"type": "number", "exclusiveMaximum": 2.5}, "exclusiveMaximum", [math.nextafter(2.5, -math.inf)]),
    ({"type": "number", "minimum": -1.25, "maximum": 2.5}, "minimum", [-1.25]),
    ({"type": "number", "minimum": -1.25, "maximum": 2.5}, "maximum", [2.5]),
    ({"type": "integer", "minimum": 3, "maximum": 42, "multipleOf": 5}, "minimum", [5]),
    ({"type": "integer", "minimum": 3, "maximum": 42, "multipleOf": 5}, "maximum", [40]),
    ({"type": "integer", "exclusiveMinimum": 10, "multipleOf": 5}, "exclusiveMinimum", [15]),
    ({"type": "number", "minimum": 0.5, "maximum": 80, "multipleOf": 0.25}, "maximum", [80]),
    ({"type": "string", "minLength": 2, "maxLength": 4}, "minLength", ["\U0001d11e" * 2]),
    ({"type": "string", "minLength": 2, "maxLength": 4}, "maxLength", ["\U0001d11e" * 4]),
    ({"type": "array", "items": {"type": "integer"}, "minItems": 2, "maxItems": 3}, "minItems", [[0, 0]]),
    ({"type": "array", "items": {"type": "integer"}, "minItems": 2, "maxItems": 3}, "maxItems", [[0, 0, 0]]),
    ({"enum": ["north", "harbour", 3, None]}, "enum", ["north", "harbour", 3, None]),
    ({"const": "metric"}, "const", ["metric"]),
]


@pytest.mark.parametrize(("prop", "keyword", "expected"), TABLE, ids=[f"{k}-{i}" for i, (_, k, _) in enumerate(TABLE)])
def test_bounds_hit_exactly(prop: dict, keyword: str, expected: list[Any]) -> None:
    got = values(_obj(prop), keyword)
    for value in expected:
        assert any(v == value and type(v) is type(value) for v in got), (keyword, value, got)
    # jsonschema as the reference validator: each boundary value is valid.
    assert all(jsonschema.Draft202012Validator(prop).is_valid(v) for v in got)


def test_lengths_count_code_points_not_utf16_units() -> None:
    # 2020-12 validation 6.3.1: length is the number of characters (code points); U+1D11E is one
    # character but two UTF-16 code units, so a UTF-16 counter would see 8 units here, not 4.
    (text,) = values(_obj({"type": "string", "minLength": 2, "maxLength": 4}), "maxLength")
    assert len(text) == 4
    assert len(text.encode("utf-16-le")) // 2 == 8


def test_unique_items_bounds_use_distinct_items() -> None:
    schema = _obj({"type": "array", "items": {"enum": ["r", "g", "b"]}, "minItems": 3, "maxItems": 3, "uniqueItems": True})
    (arr,) = values(schema, "minItems")
    assert sorted(arr) == ["b", "g", "r"]


def test_smallest_and_fullest_object() -> None:
    schema = {
        "type": "object",
        "properties": {"a": {"type": "integer"}, "b": {"type": "string"}, "c": {"type": "boolean"}},
        "required": ["a"],
    }
    cases = go_cases(schema)
    smallest = [c.arguments for c in cases if c.keyword == "required" and c.path == "$"]
    fullest = [c.arguments for c in cases if c.keyword == "properties" and c.path == "$"]
    assert {tuple(sorted(v)) for v in smallest} == {("a",)}
    assert {tuple(sorted(v)) for v in fullest} == {("a", "b", "c")}


def test_pattern_lengths_are_exact_too() -> None:
    schema = _obj({"type": "string", "pattern": "^P\\d+$", "minLength": 3, "maxLength": 6})
    assert values(schema, "minLength") == ["P00"]
    assert values(schema, "maxLength") == ["P00000"]
