"""Dialects and bad schemas: honour $schema, default 2020-12, fail one tool with a named problem.

References: MCP 2025-11-25 basic/index "JSON Schema usage" (default dialect 2020-12, honour $schema,
fail gracefully on unsupported dialects); MCP 2026-07-28 basic/index (no network $ref by default);
JSON Schema 2020-12 core section 8.2.3 ($ref), draft-07 section 8.3 ($ref overrides siblings);
``jsonschema`` as the reference validator.
"""

from __future__ import annotations

import socket

import jsonschema
import pytest

from feeler.errors import SchemaProblem
from feeler.generate import ToolSchema, go_cases, nogo_cases
from gen_reference import reference_validator


def _with(dialect: str | None, body: dict) -> dict:
    schema = dict(body)
    if dialect:
        schema["$schema"] = dialect
    return schema


@pytest.mark.parametrize(
    ("dialect", "validator"),
    [
        ("http://json-schema.org/draft-07/schema#", jsonschema.Draft7Validator),
        ("https://json-schema.org/draft/2019-09/schema", jsonschema.Draft201909Validator),
        ("https://json-schema.org/draft/2020-12/schema", jsonschema.Draft202012Validator),
        (None, jsonschema.Draft202012Validator),
    ],
)
def test_dialect_is_honoured(dialect: str | None, validator: type) -> None:
    ts = ToolSchema(_with(dialect, {"type": "object", "properties": {"n": {"type": "integer", "minimum": 1}}}))
    assert ts.validator_class is validator


def test_draft07_tuple_items_and_ref_override() -> None:
    # draft-07: "items" as an array is positional; siblings of $ref are ignored.
    schema = {
        "$schema": "http://json-schema.org/draft-07/schema#",
        "type": "object",
        "properties": {
            "pair": {"type": "array", "items": [{"type": "integer"}, {"type": "string"}], "additionalItems": False},
            "n": {"$ref": "#/definitions/n", "maximum": 0},
        },
        "required": ["pair", "n"],
        "definitions": {"n": {"type": "integer", "minimum": 5}},
    }
    oracle = jsonschema.Draft7Validator(schema, format_checker=jsonschema.Draft7Validator.FORMAT_CHECKER)
    go, nogo = go_cases(schema), nogo_cases(schema)
    assert go and all(oracle.is_valid(c.arguments) for c in go)
    assert {c.keyword for c in nogo} >= {"additionalItems", "minimum", "type"}
    assert not [c for c in nogo if c.keyword == "maximum"]  # ignored in draft-07, so never "violated"


def test_2020_prefix_items_and_ref_siblings() -> None:
    schema = {
        "type": "object",
        "properties": {"n": {"$ref": "#/$defs/n", "maximum": 9}},
        "required": ["n"],
        "$defs": {"n": {"type": "integer", "minimum": 5}},
    }
    nogo = nogo_cases(schema)
    assert {("minimum", "/$defs/n/minimum"), ("maximum", "/properties/n/maximum")} <= {(c.keyword, c.schema_path) for c in nogo}


@pytest.mark.parametrize("dialect", ["http://json-schema.org/draft-04/schema#", "https://example.org/my-dialect"])
def test_unknown_dialect(dialect: str) -> None:
    with pytest.raises(SchemaProblem, match="unknown JSON Schema dialect") as info:
        ToolSchema({"$schema": dialect, "type": "object"}, name="shelve")
    assert info.value.reason == "unknown-dialect"
    assert "shelve" in str(info.value)


class _NoNetwork:
    def __enter__(self) -> None:
        self.saved = socket.socket.connect

        def refuse(*args: object, **kwargs: object) -> None:
            raise AssertionError("a network connection was attempted")

        socket.socket.connect = refuse  # type: ignore[method-assign]

    def __exit__(self, *exc: object) -> None:
        socket.socket.connect = self.saved  # type: ignore[method-assign]


@pytest.mark.parametrize(
    "ref", ["https://example.org/schemas/port.json", "port.json#/$defs/p", "http://127.0.0.1:9/x.json#"]
)
def test_remote_ref_is_a_problem_without_network(ref: str) -> None:
    with _NoNetwork():
        with pytest.raises(SchemaProblem) as info:
            ToolSchema({"type": "object", "properties": {"p": {"$ref": ref}}})
    assert info.value.reason == "remote-ref"
    assert "never fetches" in str(info.value)


def test_unresolvable_local_ref() -> None:
    with pytest.raises(SchemaProblem) as info:
        ToolSchema({"type": "object", "properties": {"p": {"$ref": "#/$defs/missing"}}})
    assert info.value.reason == "unresolvable-ref"


def _depth(value: object, key: str) -> int:
    """How many times *key* nests inside *value*."""
    depth = 0
    while isinstance(value, dict) and isinstance(value.get(key), dict):
        value, depth = value[key], depth + 1
    return depth


@pytest.mark.parametrize("depth", [0, 1, 3])
def test_recursive_ref_is_generated_to_the_depth_setting(depth: int) -> None:
    # 2020-12 core 8.2.3.1: $ref may point at an ancestor; generation follows it at most `depth` times,
    # validation (jsonschema) is unbounded.
    chain = {"type": "object", "properties": {"head": {"$ref": "#/$defs/link"}}, "required": ["head"],
             "$defs": {"link": {"type": "object", "properties": {"label": {"type": "string", "maxLength": 3},
                                                                 "next": {"$ref": "#/$defs/link"}},
                                "required": ["label"]}}}  # fmt: skip
    ts = ToolSchema(chain, recursion_depth=depth)
    assert ts.recursive_refs == {"/$defs/link/properties/next/$ref"}
    oracle = jsonschema.Draft202012Validator(chain)
    go = go_cases(ts, draws=30, seed=2)
    assert go and all(oracle.is_valid(c.arguments) for c in go)  # jsonschema as the reference validator
    deepest = max(_depth(c.arguments["head"], "next") for c in go)
    assert deepest <= depth
    if depth:
        assert deepest == depth, deepest  # the fullest base case goes down to the depth
    nogo = nogo_cases(ts)
    # A keyword inside the recursion is broken below the root level too (the walk follows the instance).
    assert any(c.schema_path == "/$defs/link/properties/label/maxLength" and c.path.count("next") == min(depth, 1) for c in nogo) or not depth


def test_id_and_anchor_references_inside_the_document_resolve() -> None:
    # 2020-12 core 8.2.1 ($id), 8.2.2 ($anchor), 9.2 (embedded resources); referencing resolves them.
    schema = {
        "$id": "https://example.org/schemas/lending.json",
        "type": "object",
        "properties": {"member": {"$ref": "member.json"}, "days": {"$ref": "#loan-days"}},
        "required": ["member", "days"],
        "$defs": {
            "m": {"$id": "member.json", "type": "object", "properties": {"card": {"type": "string", "pattern": "^C[0-9]{4}$"}},
                  "required": ["card"]},
            "d": {"$anchor": "loan-days", "type": "integer", "minimum": 1, "maximum": 28},
        },
    }  # fmt: skip
    oracle = reference_validator(schema)  # jsonschema, patterns read by an ECMA-262 engine (regress)
    go, nogo = go_cases(schema), nogo_cases(schema)
    assert go and all(oracle.is_valid(c.arguments) for c in go)
    assert nogo and not any(oracle.is_valid(c.arguments) for c in nogo)
    locations = {c.schema_path for c in nogo}
    assert {"/$defs/m/properties/card/pattern", "/$defs/d/minimum", "/$defs/d/maximum"} <= locations, locations


@pytest.mark.parametrize("bad", [{"type": "objekt"}, {"minimum": "three"}, {"required": "a"}, [1, 2], "object"])
def test_invalid_schema(bad: object) -> None:
    with pytest.raises(SchemaProblem) as info:
        ToolSchema(bad)
    assert info.value.reason == "invalid-schema"


def test_unsatisfiable_schema() -> None:
    with pytest.raises(SchemaProblem) as info:
        go_cases({"type": "object", "properties": {"n": {"type": "integer", "minimum": 5, "maximum": 1}}, "required": ["n"]})
    assert info.value.reason == "unsatisfiable"


def test_one_bad_tool_does_not_stop_the_others() -> None:
    tools = {
        "good": {"type": "object", "properties": {"n": {"type": "integer"}}},
        "remote": {"type": "object", "properties": {"p": {"$ref": "https://example.org/p.json"}}},
        "also_good": {"type": "object", "properties": {"s": {"type": "string", "maxLength": 2}}},
    }
    results: dict[str, object] = {}
    for name, schema in tools.items():
        try:
            results[name] = len(nogo_cases(ToolSchema(schema, name=name)))
        except SchemaProblem as exc:
            results[name] = exc.reason
    assert results["remote"] == "remote-ref"
    assert isinstance(results["good"], int) and isinstance(results["also_good"], int)
