"""The seeded go-case sampler (``fast_go_cases``): every case valid, same seed same cases, real variety.

References: ``jsonschema`` (4.26) as the reference validator, built here independently of the generator
with format checking on; JSON Schema 2020-12 validation specification sections 6.1-6.5 (the keywords
the sampled schemas use) and 6.3.3 (``pattern``, matched unanchored); formats per RFC 3339, RFC 5321,
RFC 3986, RFC 9562, RFC 2673/4291, RFC 1123.
"""

from __future__ import annotations

import json
import random
import re
from typing import Any

import pytest
from hypothesis import HealthCheck, Phase, given, settings

from feeler._json import canonical_dumps
from feeler.errors import SchemaProblem
from feeler.generate import ToolSchema, drawn_cases, fast_go_cases, go_cases
from feeler.generate._fast import fast_values
from test_gen_oracle import CORPUS, reference_validator, tool_schemas  # the property-test schema strategy

SHELF = {
    "type": "object",
    "properties": {
        "title": {"type": "string", "maxLength": 40},
        "copies": {"type": "integer", "minimum": 0, "maximum": 99},
        "lendable": {"type": "boolean"},
        "price": {"type": "number", "exclusiveMinimum": 0},
        "code": {"type": "string", "pattern": "^[A-Z]{2}-\\d{3}$"},
        "when": {"type": "string", "format": "date-time"},
        "crew": {"type": "array", "items": {"enum": ["ada", "bo", "cy"]}, "uniqueItems": True, "maxItems": 3},
        "berth": {"anyOf": [{"type": "null"}, {"$ref": "#/$defs/berth"}]},
    },
    "required": ["title", "copies"],
    "additionalProperties": False,
    "$defs": {"berth": {"type": "object", "properties": {"row": {"type": "integer", "minimum": 1}}, "required": ["row"]}},
}


def _schemas(count: int) -> list[dict]:
    """*count* schemas from the property-test strategy, collected first: the sampler's pool fallback
    draws with ``@given`` itself, which hypothesis refuses inside another ``@given``."""
    out: list[dict] = []

    @settings(max_examples=count, database=None, deadline=None, derandomize=True, phases=[Phase.generate],
              suppress_health_check=list(HealthCheck))
    @given(tool_schemas())
    def collect(schema: dict) -> None:
        out.append(schema)

    collect()
    return out


@pytest.mark.parametrize("path", CORPUS, ids=[p.stem for p in CORPUS])
def test_corpus_fast_cases_validate(path: Any) -> None:
    schema = json.loads(path.read_text(encoding="utf-8"))
    oracle = reference_validator(schema)
    cases = fast_go_cases(schema, 40, seed=7)
    assert len(cases) == 40
    for case in cases:
        # jsonschema as the reference validator: every drawn go case is valid against the whole schema.
        assert oracle.is_valid(case.arguments), (case.arguments, [e.message for e in oracle.iter_errors(case.arguments)])
        assert case.kind == "go" and case.error is None and case.path == "$"


def test_property_schemas_fast_cases_validate() -> None:
    built = 0
    schemas = _schemas(50)
    for schema in schemas:
        try:
            go_cases(schema)  # unsatisfiable drawn schemas (e.g. uniqueItems over a one-member enum) are skipped
        except SchemaProblem as exc:
            assert exc.reason == "unsatisfiable"
            continue
        oracle = reference_validator(schema)
        for case in fast_go_cases(schema, 12, seed=5):
            # jsonschema as the reference validator, independent of the generator's compiled oracle.
            assert oracle.is_valid(case.arguments), (schema, case.arguments)
        values, _ = fast_values(ToolSchema(schema), 12, random.Random(5))
        built += len(values) == 12
    # The sampler itself (not the hypothesis fallback) fills nearly every schema.
    assert built >= 0.9 * len(schemas), (built, len(schemas))


def test_same_seed_same_cases() -> None:
    first = fast_go_cases(SHELF, 30, seed=11)
    assert [c.arguments for c in first] == [c.arguments for c in fast_go_cases(SHELF, 30, seed=11)]
    assert [c.arguments for c in first] != [c.arguments for c in fast_go_cases(SHELF, 30, seed=12)]
    # A fresh compile gives the same cases: nothing depends on cache state or dict identity.
    assert [c.arguments for c in first] == [c.arguments for c in fast_go_cases(json.loads(json.dumps(SHELF)), 30, seed=11)]


def test_drawn_cases_and_go_cases_use_the_sampler() -> None:
    assert drawn_cases(SHELF, 10, seed=3) == fast_go_cases(SHELF, 10, seed=3)
    drawn = [c for c in go_cases(SHELF, draws=10, seed=3) if c.source == "sampled"]
    assert [c.arguments for c in drawn] == [c.arguments for c in fast_go_cases(SHELF, 10, seed=3)]


def test_variety() -> None:
    cases = [c.arguments for c in fast_go_cases(SHELF, 200, seed=1)]
    oracle = reference_validator(SHELF)
    assert all(oracle.is_valid(v) for v in cases)  # jsonschema as the reference validator
    assert len({canonical_dumps(v) for v in cases}) >= 190
    # Every optional property is sometimes present and sometimes absent (random subsets).
    for name in ("lendable", "price", "code", "when", "crew", "berth"):
        present = sum(name in v for v in cases)
        assert 20 < present < 180, (name, present)
    assert len({v["copies"] for v in cases}) > 30
    assert {0, 99} <= {v["copies"] for v in cases}, "bounds are hit now and then"
    codes = {v["code"] for v in cases if "code" in v}
    assert len(codes) > 20 and all(re.search(r"^[A-Z]{2}-\d{3}$", c) for c in codes)  # 2020-12 validation 6.3.3
    berths = [v["berth"] for v in cases if "berth" in v]
    assert None in berths and any(isinstance(b, dict) for b in berths), "both anyOf branches are taken"
    assert len({len(v["crew"]) for v in cases if "crew" in v}) >= 3


def test_the_sampler_needs_no_hypothesis_for_common_shapes() -> None:
    values, refused = fast_values(ToolSchema(SHELF), 100, random.Random(0))
    assert len(values) == 100
    assert refused <= 10, refused


def test_nodes_the_sampler_cannot_build_fall_back_and_stay_valid() -> None:
    # "not" and "contains" are not built directly: sampled without them, then filtered by the node's validator.
    schema = {
        "type": "object",
        "properties": {
            "word": {"type": "string", "minLength": 1, "not": {"const": "a"}},
            "tags": {"type": "array", "items": {"type": "integer", "minimum": 0, "maximum": 5}, "contains": {"const": 3}},
            "pick": {"oneOf": [{"type": "integer", "minimum": 0}, {"type": "integer", "maximum": 10}]},
        },
        "required": ["word", "tags", "pick"],
    }
    oracle = reference_validator(schema)
    cases = fast_go_cases(schema, 50, seed=2)
    assert len(cases) == 50
    assert all(oracle.is_valid(c.arguments) for c in cases)  # jsonschema as the reference validator
    assert len({c.arguments["pick"] for c in cases}) > 5


def test_an_exact_schema_is_audited_and_a_sampler_bug_is_caught() -> None:
    """Values of an exact root shape are valid by construction, so the oracle audits every AUDIT_EVERY-th
    one. A sampler made wrong on purpose (it returns arguments missing a required property at two draws,
    one the audit skips and one it checks) is caught: a GeneratorBugWarning, the refused values dropped,
    the values kept so far checked again, and every later value checked (jsonschema as the reference)."""
    from feeler.generate import GeneratorBugWarning
    from feeler.generate._fast import AUDIT_EVERY, sampler_for, sampler_mismatch
    from feeler.generate._model import model_of

    schema = {"type": "object", "properties": {"n": {"type": "integer", "minimum": 0, "maximum": 10**6}}, "required": ["n"]}
    ts = ToolSchema(schema)
    root = model_of(ts).root_shape
    assert root.exact
    good = sampler_for(root)
    draws = [0]
    wrong = {3, AUDIT_EVERY}  # draw 3 is not audited, draw AUDIT_EVERY is (the audit's clock starts at 0)

    def broken(rng: random.Random) -> Any:
        draws[0] += 1
        return {} if draws[0] - 1 in wrong else good(rng)

    root.__dict__["_sampler"] = broken
    with pytest.warns(GeneratorBugWarning, match="refuses"):
        values, refused = fast_values(ts, 3 * AUDIT_EVERY, random.Random(0))
    oracle = reference_validator(schema)
    assert len(values) == 3 * AUDIT_EVERY and all(oracle.is_valid(v) for v in values)
    assert refused >= 2 and sampler_mismatch(ts) is not None
    # From now on every value of this schema is checked: a wrong draw anywhere is refused, not kept.
    wrong.update(range(draws[0], draws[0] + 2 * AUDIT_EVERY, 5))
    values, refused = fast_values(ts, 2 * AUDIT_EVERY, random.Random(1))
    assert all(oracle.is_valid(v) for v in values) and refused >= 6


def test_an_exact_schema_is_not_validated_value_by_value(monkeypatch: pytest.MonkeyPatch) -> None:
    """The audit's share: for an exact root shape the whole-schema oracle sees one value in AUDIT_EVERY
    (the first included), and the values are the same as when every one is checked (same seed)."""
    from feeler.generate._fast import AUDIT_EVERY

    schema = {"type": "object", "properties": {"a": {"type": "string", "maxLength": 5}, "b": {"type": "boolean"}}, "required": ["a"]}
    checked = ToolSchema(schema)
    calls = [0]
    real = ToolSchema.is_valid

    def counting(self: ToolSchema, instance: Any) -> bool:
        calls[0] += 1
        return real(self, instance)

    monkeypatch.setattr(ToolSchema, "is_valid", counting)
    values, refused = fast_values(checked, 4 * AUDIT_EVERY, random.Random(9))
    assert refused == 0 and calls[0] <= 4 + 1
    oracle = reference_validator(schema)
    assert all(oracle.is_valid(v) for v in values)  # jsonschema as the reference validator
    monkeypatch.setattr("feeler.generate._fast.AUDIT_EVERY", 1)  # every value checked: the same values
    calls[0] = 0
    assert fast_values(ToolSchema(schema), 4 * AUDIT_EVERY, random.Random(9)) == (values, 0)
    assert calls[0] >= 4 * AUDIT_EVERY


def test_inlined_character_choice_is_random_choice() -> None:
    """The text sampler draws characters with Random.getrandbits the way Random.choice does (Python's
    random module, CPython's _randbelow_with_getrandbits): the same characters and the same state after,
    for any alphabet size, so the seeded values do not depend on which path drew them."""
    from feeler.generate._fast import _chars

    for alphabet in ("a", "ab", "abc", "0123456789", "".join(chr(c) for c in range(32, 127)), "éßøΩжあ中🙂"):
        for seed in range(20):
            fast, slow = random.Random(seed), random.Random(seed)
            expected = "".join(slow.choice(alphabet) for _ in range(seed % 13))
            assert _chars(fast, alphabet, seed % 13) == expected
            assert fast.random() == slow.random()

    class OwnRandom(random.Random):  # overriding random() gives another _randbelow: the plain path
        def random(self) -> float:
            return super().random()

    mine, theirs = OwnRandom(3), OwnRandom(3)
    assert _chars(mine, "xyz", 9) == "".join(theirs.choice("xyz") for _ in range(9))
