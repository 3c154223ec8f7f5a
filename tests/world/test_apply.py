"""Putting pool values into arguments; every result is checked with ``jsonschema`` (the reference
validator) against the JSON Schema 2020-12 document it must satisfy."""

from __future__ import annotations

import jsonschema

from feeler.generate import Case
from feeler.world import ValuePool
from feeler.world.apply import apply_values, case_source, put_at, slots, with_values

SCHEMA = {
    "type": "object",
    "properties": {
        "root": {"type": "string", "minLength": 1},
        "depth": {"type": "integer", "minimum": 0, "maximum": 5},
        "owner": {"$ref": "#/$defs/owner"},
        "tags": {"type": "array", "items": {"type": "object", "properties": {"name": {"type": "string", "maxLength": 4}}}},
    },
    "required": ["root"],
    "additionalProperties": False,
    "$defs": {"owner": {"type": "object", "properties": {"email": {"type": "string"}}}},
}


def _pool(**values: object) -> ValuePool:
    pool = ValuePool()
    for key, value in values.items():
        pool.add(key, value, source="known", provenance="test")
    return pool


def test_slots_follow_properties_refs_and_items() -> None:
    # JSON Schema 2020-12 core 10.3.2.1 (properties), 8.2.3.1 ($ref), 10.3.1.2 (items).
    found = {s.pointer: s.present for s in slots(SCHEMA, {"root": "a", "owner": {}, "tags": [{"name": "x"}]})}
    assert found == {"/root": True, "/depth": False, "/owner": True, "/tags": True, "/owner/email": False, "/tags/0/name": True}


def test_values_go_in_only_where_the_oracle_still_accepts() -> None:
    pool = _pool(root="/srv/orchard", depth=9, name="toolong")  # depth 9 breaks maximum, name breaks maxLength
    applied = apply_values(SCHEMA, "t", {"root": "a", "tags": [{"name": "x"}]}, pool)
    assert applied.arguments == {"root": "/srv/orchard", "tags": [{"name": "x"}]}
    assert [p for p, _ in applied.used] == ["/root"]
    assert applied.source == "known"
    jsonschema.validate(applied.arguments, SCHEMA, cls=jsonschema.Draft202012Validator)


def test_a_list_is_spread_over_cases_by_pick_and_pointers_win_over_names() -> None:
    pool2 = ValuePool()
    for v in ("/a", "/b"):
        pool2.add("root", v, source="known", provenance="test")
    picked = {apply_values(SCHEMA, "t", {"root": "x"}, pool2, pick=i).arguments["root"] for i in range(2)}
    assert picked == {"/a", "/b"}
    pool2.add("/owner/email", "e@example.org", source="known", provenance="test", tool="t")
    out = apply_values(SCHEMA, "t", {"root": "x", "owner": {}}, pool2).arguments
    assert out["owner"] == {"email": "e@example.org"}
    assert apply_values(SCHEMA, "other", {"root": "x", "owner": {}}, pool2).arguments["owner"] == {}


def test_the_exercised_place_is_kept() -> None:
    pool = _pool(depth=2, root="/srv/orchard")
    bound = Case("go", "minimum", "$.depth", "/properties/depth/minimum", {"root": "a", "depth": 0})
    out = with_values(SCHEMA, "t", bound, pool)
    assert out.arguments == {"root": "/srv/orchard", "depth": 0}
    assert case_source(out) == "known" and case_source(bound) == "schema"
    # A keyword on the root object (required): present values are replaced, nothing is added.
    smallest = Case("go", "required", "$", "/required", {"root": "a"})
    assert with_values(SCHEMA, "t", smallest, pool).arguments == {"root": "/srv/orchard"}
    assert with_values(SCHEMA, "t", bound, ValuePool()) is bound


def test_put_at_copies() -> None:
    original = {"a": [{"b": 1}]}
    assert put_at(original, "/a/0/b", 2) == {"a": [{"b": 2}]}
    assert original == {"a": [{"b": 1}]}
