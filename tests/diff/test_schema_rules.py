"""Table-driven schema edit pairs: each with its expected verdict, each breaking one proven by a witness.

Reference validator: ``jsonschema`` (Draft202012Validator with its FORMAT_CHECKER), called directly here,
independent of feeler's own wrapper. Keyword semantics: JSON Schema 2020-12 Validation
(draft-bhutton-json-schema-validation-01) and Core (draft-bhutton-json-schema-01), sections beside each case.
"""

from __future__ import annotations

from typing import Any

import jsonschema
import pytest

from feeler.diff import SCHEMA_RULES, Change, Direction, Verdict, diff_schemas

IN, OUT = Direction.INPUT, Direction.OUTPUT
B, C, R, L = Verdict.BREAKING, Verdict.COMPATIBLE, Verdict.REVIEW, Verdict.LIKELY_BREAKING


def obj(props: dict[str, Any], required: tuple[str, ...] = (), **extra: Any) -> dict[str, Any]:
    out: dict[str, Any] = {"type": "object", "properties": props, **extra}
    if required:
        out["required"] = list(required)
    return out


def p(**schema: Any) -> dict[str, Any]:
    """A root object with a single optional property ``v``."""
    return obj({"v": schema})


S = {"type": "string"}
I = {"type": "integer"}

# (case id, direction, old, new, expected rule name, expected verdict)
CASES: list[tuple[str, Direction, Any, Any, str, Verdict]] = [
    # type — Validation 6.1.1
    ("type-narrowed-in", IN, p(type=["string", "integer"]), p(type="string"), "type", B),
    ("type-widened-in", IN, p(type="string"), p(type=["string", "null"]), "type", C),
    ("type-widened-out", OUT, p(type="string"), p(type=["string", "null"]), "type", B),
    ("number-to-integer-in", IN, p(type="number"), p(type="integer"), "type", B),
    ("integer-to-number-out", OUT, p(type="integer"), p(type="number"), "type", B),
    ("type-changed-out", OUT, p(type="string"), p(type="integer"), "type", B),
    # enum / const — Validation 6.1.2, 6.1.3
    ("enum-removed-in", IN, p(enum=["a", "b", "c"]), p(enum=["a", "b"]), "enum", B),
    ("enum-added-in", IN, p(enum=["a"]), p(enum=["a", "b"]), "enum", C),
    ("enum-added-out", OUT, p(enum=["a"]), p(enum=["a", "b"]), "enum", B),
    ("enum-removed-out", OUT, p(enum=["a", "b"]), p(enum=["a"]), "enum", C),
    ("enum-introduced-in", IN, p(type="string"), p(type="string", enum=["x"]), "enum", B),
    ("const-added-in", IN, p(type="string"), p(type="string", const="x"), "const", B),
    ("const-changed-out", OUT, p(const=1), p(const=2), "const", B),
    ("const-removed-in", IN, p(type="integer", const=1), p(type="integer"), "const", C),
    # numeric bounds — Validation 6.2.1-6.2.5
    ("maximum-lowered-in", IN, p(type="integer", maximum=100), p(type="integer", maximum=50), "maximum", B),
    ("maximum-raised-out", OUT, p(type="integer", maximum=50), p(type="integer", maximum=100), "maximum", B),
    ("maximum-raised-in", IN, p(type="integer", maximum=50), p(type="integer", maximum=100), "maximum", C),
    ("minimum-raised-in", IN, p(type="number", minimum=0), p(type="number", minimum=1), "minimum", B),
    ("minimum-added-in", IN, p(type="integer"), p(type="integer", minimum=0), "minimum", B),
    ("minimum-removed-out", OUT, p(type="integer", minimum=0), p(type="integer"), "minimum", B),
    ("exclusive-minimum-in", IN, p(type="integer", minimum=0), p(type="integer", exclusiveMinimum=0), "minimum", B),
    ("exclusive-maximum-out", OUT, p(type="number", exclusiveMaximum=10), p(type="number", maximum=10), "maximum", B),
    ("multipleOf-added-in", IN, p(type="integer"), p(type="integer", multipleOf=5), "multipleOf", B),
    ("multipleOf-coarser-in", IN, p(type="integer", multipleOf=2), p(type="integer", multipleOf=4), "multipleOf", B),
    ("multipleOf-finer-in", IN, p(type="integer", multipleOf=4), p(type="integer", multipleOf=2), "multipleOf", C),
    # strings — Validation 6.3.1-6.3.3, 7
    ("maxLength-lowered-in", IN, p(type="string", maxLength=10), p(type="string", maxLength=5), "length", B),
    ("minLength-raised-in", IN, p(type="string"), p(type="string", minLength=3), "length", B),
    ("maxLength-removed-out", OUT, p(type="string", maxLength=5), p(type="string"), "length", B),
    ("pattern-added-in", IN, p(type="string"), p(type="string", pattern="^[a-z]+$"), "pattern", B),
    ("pattern-changed-in", IN, p(type="string", pattern="^[a-z]+$"), p(type="string", pattern="^[0-9]+$"), "pattern", B),
    ("pattern-removed-in", IN, p(type="string", pattern="^[a-z]+$"), p(type="string"), "pattern", C),
    ("format-added-in", IN, p(type="string"), p(type="string", format="email"), "format", B),
    ("format-changed-in", IN, p(type="string", format="date"), p(type="string", format="date-time"), "format", B),
    ("format-removed-out", OUT, p(type="string", format="uuid"), p(type="string"), "format", B),
    # objects — Validation 6.5, Core 10.3.2
    ("required-added-in", IN, obj({"a": S, "b": S}, ("a",)), obj({"a": S, "b": S}, ("a", "b")), "required", B),
    ("required-removed-in", IN, obj({"a": S, "b": S}, ("a", "b")), obj({"a": S, "b": S}, ("a",)), "required", C),
    ("required-removed-out", OUT, obj({"a": S, "b": S}, ("a", "b")), obj({"a": S, "b": S}, ("a",)), "required", B),
    ("optional-added-in", IN, obj({"a": S}), obj({"a": S, "b": S}), "properties", C),
    ("property-removed-closed-in", IN, obj({"a": S, "b": S}), obj({"a": S}, additionalProperties=False),
     "properties", B),
    ("property-removed-open-in", IN, obj({"a": S, "b": S}), obj({"a": S}), "properties", R),
    ("property-removed-out", OUT, obj({"a": S, "b": S}), obj({"a": S}), "properties", B),
    ("nested-type-changed-out", OUT, obj({"o": obj({"n": I})}), obj({"o": obj({"n": S})}), "type", B),
    ("additionalProperties-closed-in", IN, obj({"a": S}), obj({"a": S}, additionalProperties=False),
     "additionalProperties", B),
    ("additionalProperties-opened-out", OUT, obj({"a": S}, additionalProperties=False), obj({"a": S}),
     "additionalProperties", B),
    ("additionalProperties-narrowed-in", IN, obj({}, additionalProperties={"type": ["string", "integer"]}),
     obj({}, additionalProperties=S), "type", B),
    ("minProperties-raised-in", IN, obj({"a": S, "b": S}), obj({"a": S, "b": S}, minProperties=1),
     "properties-count", B),
    ("maxProperties-lowered-in", IN, obj({"a": S, "b": S}, maxProperties=2), obj({"a": S, "b": S}, maxProperties=1),
     "properties-count", B),
    ("dependentRequired-added-in", IN, obj({"a": S, "b": S}), obj({"a": S, "b": S}, dependentRequired={"a": ["b"]}),
     "dependentRequired", B),
    # arrays — Core 10.3.1, Validation 6.4
    ("items-type-narrowed-in", IN, p(type="array", items={"type": ["string", "integer"]}),
     p(type="array", items=S), "type", B),
    ("items-enum-added-out", OUT, p(type="array", items={"enum": ["a"]}), p(type="array", items={"enum": ["a", "b"]}),
     "enum", B),
    ("prefixItems-narrowed-in", IN, p(type="array", prefixItems=[S, {"type": ["integer", "null"]}]),
     p(type="array", prefixItems=[S, I]), "type", B),
    ("maxItems-lowered-in", IN, p(type="array", items=I, maxItems=5), p(type="array", items=I, maxItems=2),
     "items-count", B),
    ("minItems-raised-in", IN, p(type="array", items=I), p(type="array", items=I, minItems=1), "items-count", B),
    ("uniqueItems-added-in", IN, p(type="array", items=I), p(type="array", items=I, uniqueItems=True),
     "uniqueItems", B),
    ("items-closed-in", IN, p(type="array"), p(type="array", items=False), "items", B),
    # combinators — Core 10.2.1
    ("anyOf-branch-removed-in", IN, p(anyOf=[S, I]), p(anyOf=[S]), "anyOf", B),
    ("anyOf-branch-added-in", IN, p(anyOf=[S]), p(anyOf=[S, I]), "anyOf", C),
    ("anyOf-branch-added-out", OUT, p(anyOf=[S]), p(anyOf=[S, I]), "anyOf", B),
    ("oneOf-branch-removed-in", IN, p(oneOf=[S, I]), p(oneOf=[I]), "oneOf", B),
    ("allOf-branch-added-in", IN, p(allOf=[{"type": "integer"}]), p(allOf=[{"type": "integer"}, {"minimum": 3}]),
     "allOf", B),
    ("not-added-in", IN, p(type="integer"), p(type="integer", **{"not": {"const": 0}}), "not", B),
    ("anyOf-pairwise-narrowed-in", IN, p(anyOf=[{"type": "string", "maxLength": 9}, I]),
     p(anyOf=[{"type": "string", "maxLength": 3}, I]), "length", B),
    # $defs / $ref — Core 8.2.3.1, 8.2.4
    ("ref-target-narrowed-in", IN,
     {"type": "object", "properties": {"v": {"$ref": "#/$defs/size"}}, "$defs": {"size": {"enum": ["s", "m", "l"]}}},
     {"type": "object", "properties": {"v": {"$ref": "#/$defs/size"}}, "$defs": {"size": {"enum": ["s", "m"]}}},
     "enum", B),
    ("recursive-ref-out", OUT,
     {"$ref": "#/$defs/n", "$defs": {"n": {"type": "object", "properties": {"k": I, "c": {"$ref": "#/$defs/n"}}}}},
     {"$ref": "#/$defs/n", "$defs": {"n": {"type": "object", "properties": {"k": {"type": ["integer", "null"]},
                                                                            "c": {"$ref": "#/$defs/n"}}}}},
     "type", B),
    # annotations — Validation 9
    ("description-changed", IN, p(type="string", description="a"), p(type="string", description="b"),
     "annotation", R),
    ("default-changed", IN, p(type="integer", default=1), p(type="integer", default=2), "annotation", R),
    ("vendor-keyword-changed", IN, p(type="string", **{"x-unit": "s"}), p(type="string", **{"x-unit": "ms"}),
     "unknown-keyword", R),
    # boolean schemas — Core 4.3.2
    ("root-true-to-object-in", IN, True, obj({"a": S}, ("a",)), "type", B),
]


def _reference_valid(schema: Any, instance: Any) -> bool:
    """jsonschema, the reference validator: 2020-12 (the MCP default dialect), formats asserted."""
    cls = jsonschema.validators.validator_for(schema, default=jsonschema.Draft202012Validator)
    return cls(schema, format_checker=cls.FORMAT_CHECKER).is_valid(instance)


def _find(changes: list[Change], kind: str) -> list[Change]:
    return [c for c in changes if c.rule == kind]


@pytest.mark.parametrize(("case", "direction", "old", "new", "kind", "verdict"), CASES, ids=[c[0] for c in CASES])
def test_schema_edit_verdict(case: str, direction: Direction, old: Any, new: Any, kind: str, verdict: Verdict) -> None:
    changes = diff_schemas(old, new, direction, samples=15)
    found = _find(changes, kind)
    assert found, f"{case}: no {kind!r} change in {[c.to_json() for c in changes]}"
    assert verdict in {c.verdict for c in found}, [c.to_json() for c in found]
    for change in changes:
        if change.verdict is Verdict.BREAKING:
            assert change.has_witness
            accepts, rejects = (old, new) if direction is IN else (new, old)
            # Witness: the accepting side's schema takes it and the other refuses it (jsonschema, reference).
            assert _reference_valid(accepts, change.witness), change.to_json()
            assert not _reference_valid(rejects, change.witness), change.to_json()


def test_table_covers_every_keyword_family() -> None:
    covered = {c[4] for c in CASES}
    # "conditional", "patternProperties", "contains", "unevaluated" are opaque families tested below.
    missing = set(SCHEMA_RULES) - covered - {"conditional", "patternProperties", "contains", "unevaluated"}
    assert not missing
    assert len(CASES) >= 40


@pytest.mark.parametrize(("kw", "old_extra", "new_extra"), [
    ("patternProperties", {}, {"propertyNames": {"maxLength": 2}}),
    ("contains", {}, {"contains": {"const": 1}}),
    ("conditional", {}, {"if": {"required": ["a"]}, "then": {"required": ["b"]}}),
])
def test_opaque_families_found_by_search(kw: str, old_extra: dict[str, Any], new_extra: dict[str, Any]) -> None:
    """Keywords without a constructive rule still get a witness from generated samples (or say likely)."""
    base = {"type": "object" if kw != "contains" else "array"}
    if kw == "conditional":
        base["properties"] = {"a": S, "b": S}
    changes = diff_schemas({**base, **old_extra}, {**base, **new_extra}, IN, samples=30)
    hits = _find(changes, kw)
    assert hits and hits[0].verdict in (B, L)
    if hits[0].verdict is B:
        assert _reference_valid({**base, **old_extra}, hits[0].witness)
        assert not _reference_valid({**base, **new_extra}, hits[0].witness)


def test_unprovable_rule_is_likely_breaking_with_reason() -> None:
    # old enum [1] already excludes everything the new "not" forbids: no witness can exist,
    # yet the rule stays visible as likely-breaking (never silently dropped).
    old = p(enum=[1])
    new = p(enum=[1], **{"not": {"const": 5}})
    changes = _find(diff_schemas(old, new, IN, samples=5), "not")
    assert changes and changes[0].verdict is L
    assert "none of" in changes[0].reason and changes[0].samples_tried > 0


def test_compatible_change_reports_samples_tried() -> None:
    changes = diff_schemas(p(type="integer", maximum=5), p(type="integer", maximum=9), IN, samples=10)
    assert [c.verdict for c in changes] == [C]
    assert changes[0].samples_tried >= 1


def test_identical_schemas_have_no_changes() -> None:
    assert diff_schemas(obj({"a": S}, ("a",)), obj({"a": S}, ("a",)), IN) == []


def test_rules_all_documented() -> None:
    for name, rule in SCHEMA_RULES.items():
        assert (rule.__doc__ or "").strip(), name
