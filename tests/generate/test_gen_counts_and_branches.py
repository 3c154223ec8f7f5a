"""Integer-valued counts (``2.0``), go cases through every branch and outcome, and the oneOf overlap.

References: JSON Schema 2020-12 validation 6.3.1-6.3.2, 6.4.1-6.4.2, 6.4.4-6.4.5, 6.5.1-6.5.2 (the
counts are non-negative integers; ``2.0`` is an integer in JSON Schema, core 4.2.2 / 6.3: a number
with a zero fractional part); core 10.2.1.2 anyOf, 10.2.1.3 oneOf (exactly one), 10.2.2 if/then/else;
``jsonschema`` as the oracle (gen_reference.py).
"""

from __future__ import annotations

from typing import Any

import pytest

from feeler.generate import arguments, compile_schema, fast_go_cases, go_cases, nogo_cases
from feeler.generate._strategies import draws
from gen_reference import error_tree, reference_validator

COUNTS = {
    "maxLength": {"type": "string", "maxLength": 2.0},
    "minLength": {"type": "string", "minLength": 1.0},
    "minItems": {"type": "array", "minItems": 1.0},
    "maxItems": {"type": "array", "maxItems": 2.0},
    "minProperties": {"type": "object", "minProperties": 1.0},
    "maxProperties": {"type": "object", "maxProperties": 1.0},
    "minContains": {"type": "array", "contains": {"type": "integer"}, "minContains": 2.0},
    "maxContains": {"type": "array", "contains": {"type": "integer"}, "maxContains": 1.0},
}


@pytest.mark.parametrize("keyword", sorted(COUNTS))
def test_integer_valued_counts_generate_everywhere(keyword: str) -> None:
    schema = {"type": "object", "properties": {"x": COUNTS[keyword]}, "required": ["x"]}
    oracle = reference_validator(schema)
    compile_schema(schema)  # not refused as unsatisfiable (minProperties 1.0 once was)
    go, nogo = go_cases(schema), nogo_cases(schema)
    assert go and all(oracle.is_valid(c.arguments) for c in go)
    assert all(not oracle.is_valid(c.arguments) for c in nogo)
    # The count itself is broken (jsonschema reports minContains/maxContains under their own names).
    assert any(c.keyword == keyword for c in nogo), sorted({c.keyword for c in nogo})
    assert all(oracle.is_valid(c.arguments) for c in fast_go_cases(schema, 20, seed=1))
    assert all(oracle.is_valid(v) for v in draws(arguments(schema), 20, seed=1))


def _where(schema: Any, value: Any) -> set[str]:
    """The anyOf/oneOf branches (``/properties/p/anyOf/1``) and if outcomes *value* goes through."""
    out = set()
    for name, sub in schema["properties"].items():
        for keyword in ("anyOf", "oneOf"):
            for i, branch in enumerate(sub.get(keyword, [])):
                if name in value and reference_validator(branch).is_valid(value[name]):
                    out.add(f"/properties/{name}/{keyword}/{i}")
    if "if" in schema:
        out.add("/then" if reference_validator(schema["if"]).is_valid(value) else "/else")
    return out


def test_go_cases_go_through_every_branch_and_outcome() -> None:
    schema = {
        "type": "object",
        "properties": {
            "contact": {"anyOf": [{"type": "string", "format": "email"}, {"type": "null"}, {"type": "integer", "minimum": 1}]},
            "shape": {"oneOf": [{"type": "string", "maxLength": 2}, {"type": "array", "maxItems": 1}]},
            "method": {"enum": ["post", "pickup"]},
        },
        "required": ["contact", "shape", "method"],
        "if": {"properties": {"method": {"const": "post"}}},
        "then": {"properties": {"contact": {"type": "string"}}},
        "else": {"properties": {"shape": {"type": "array"}}},
    }
    seen = set().union(*(_where(schema, c.arguments) for c in go_cases(schema)))
    wanted = {"/properties/contact/anyOf/0", "/properties/contact/anyOf/1", "/properties/contact/anyOf/2",
              "/properties/shape/oneOf/0", "/properties/shape/oneOf/1", "/then", "/else"}  # fmt: skip
    assert wanted <= seen, wanted - seen
    # No-go cases break keywords of the later branches and of else, not only the first ones.
    locations = {c.schema_path for c in nogo_cases(schema)}
    assert {"/properties/contact/anyOf/2/minimum", "/properties/shape/oneOf/1/maxItems", "/else/properties/shape/type"} <= locations


def test_one_of_overlap_is_a_no_go_case() -> None:
    # 15 is a multiple of 3 and of 5: valid under both branches, so oneOf refuses it (core 10.2.1.3).
    schema = {"type": "object", "properties": {"band": {"oneOf": [{"type": "integer", "multipleOf": 3},
                                                                  {"type": "integer", "multipleOf": 5}]}},
              "required": ["band"]}  # fmt: skip
    oracle = reference_validator(schema)
    overlaps = []
    for case in nogo_cases(schema, per_keyword=10):
        if case.keyword != "oneOf":
            continue
        errors = [e for e in error_tree(oracle.iter_errors(case.arguments)) if e.validator == "oneOf"]
        if errors and "is valid under each of" in errors[0].message:  # jsonschema's message for an overlap
            overlaps.append(case.arguments["band"])
    assert overlaps and all(v % 15 == 0 for v in overlaps), overlaps
