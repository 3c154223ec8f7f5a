"""Patterns are read the ECMA-262 way, by the oracle and by every generator, in bounded time.

References: JSON Schema 2020-12 core section 6.4 and validation section 6.3.3 (the ECMA-262 regular
expression dialect); ECMA-262 section 22.2 (``$`` only at the end of input, ASCII ``\\d``/``\\w``/``\\b``,
line terminators for ``.``, ``\\p{...}``); the ``regress`` package (an ECMA-262 engine, ``u`` flag) as the
reference matcher; ``jsonschema`` as the reference validator (its pattern keywords given to regress).
"""

from __future__ import annotations

import json
import pathlib
import random

import pytest
from click.testing import CliRunner

from feeler.errors import SchemaProblem
from feeler.generate import ToolSchema, compile_schema, fast_go_cases, go_cases, nogo_cases
from feeler.generate import _ecma
from feeler.generate.cli import cases
from gen_reference import ecma_search, reference_validator

# (pattern, text): each judged by our translation and by regress; they must agree.
AGREE = [
    ("^[A-Z0-9]{5}$", "A00AA\n"), ("^[A-Z0-9]{5}$", "A00AA"), (r"^\d+$", "\u0661\u0662"), (r"^\d+$", "42"),
    (r"^\w+$", "\u00e9"), (r"^\w+$", "ab_9"), (r"\bx\b", "\u00e9x\u00e9"), (r"^.$", "\r"), (r"^.$", "\u2028"),
    (r"^\s$", "\ufeff"), (r"^\s$", "\x1c"), (r"^\S$", "\x1c"), (r"^\p{Lu}+$", "\u00c0B"), (r"^\p{L}+$", "a1"),
    (r"^\P{L}+$", "12"), (r"^[^]$", "\n"), (r"^[]$", "a"), (r"^(?<y>\d)\k<y>$", "11"), (r"^\u{1F600}$", "\U0001f600"),
    (r"^\uD83D\uDE00$", "\U0001f600"), (r"^[\d-]+$", "1-2"), (r"^\cJ$", "\n"), (r"^a\/b$", "a/b"),
    (r"^[\w.]+@x$", "a.b@x"), (r"^\D$", "\u0661"), (r"^[^\d]$", "\u0661"), (r"^[\W]$", "\u00e9"), ("a$", "a\n"),
    (r"^(?:ab|cd){2}$", "abcd"), (r"^x(?=y)", "xy"), (r"^x(?!y)", "xy"), (r"(?<=a)b", "ab"), ("^\\x41$", "A"),
]  # fmt: skip


@pytest.mark.parametrize(("pattern", "text"), AGREE)
def test_translation_agrees_with_an_ecma_engine(pattern: str, text: str) -> None:
    assert _ecma.search(pattern, text) == ecma_search(pattern, text)  # regress: ECMA-262 with the u flag


def test_dollar_does_not_match_before_a_final_newline() -> None:
    # ECMA-262 22.2.2.6: $ asserts the end of input (no m flag); Python's $ also matches before a final "\n".
    ts = ToolSchema({"type": "object", "properties": {"code": {"type": "string", "pattern": "^[A-Z0-9]{5}$"}}})
    assert not ts.is_valid({"code": "A00AA\n"})
    assert ts.is_valid({"code": "A00AA"})


def test_trailing_newline_no_go_case() -> None:
    schema = {"type": "object", "properties": {"code": {"type": "string", "pattern": "^[A-Z0-9]{5}$"}}, "required": ["code"]}
    nogo = [c for c in nogo_cases(schema) if c.keyword == "pattern"]
    assert any(c.arguments["code"].endswith("\n") for c in nogo), nogo
    reference = reference_validator(schema)
    assert all(not reference.is_valid(c.arguments) for c in nogo)  # jsonschema + regress


PATTERNS = [r"^\d{3}-\w{2}$", r"^[A-Z][a-z]+\s\p{Lu}$", r"^.{2,4}$", r"^(?:[a-f\d]{2}:){2}[a-f\d]{2}$", r"^\S+@\S+$",
            r"^[^\s]{3}$", r"\bok\b"]  # fmt: skip


@pytest.mark.parametrize("pattern", PATTERNS)
def test_generated_strings_match_under_ecma(pattern: str) -> None:
    schema = {"type": "object", "properties": {"p": {"type": "string", "pattern": pattern}},
              "patternProperties": {pattern: {"type": "integer"}}, "required": ["p"]}  # fmt: skip
    reference = reference_validator(schema)
    values = [c.arguments for c in go_cases(schema)] + [c.arguments for c in fast_go_cases(schema, 20, seed=2)]
    assert values
    for value in values:
        assert ecma_search(pattern, value["p"]), value  # regress: ECMA-262
        assert reference.is_valid(value), value


def test_pattern_properties_keys_are_matched_the_ecma_way() -> None:
    # A key "ab\n" is not matched by ^[a-z]+$ under ECMA-262, so additionalProperties: false refuses it.
    schema = {"type": "object", "patternProperties": {"^[a-z]+$": {"type": "integer"}}, "additionalProperties": False}
    ts, reference = ToolSchema(schema), reference_validator(schema)
    for value in ({"ab": 1}, {"ab\n": 1}, {"\u00e9": 1}):
        assert ts.is_valid(value) == reference.is_valid(value)


@pytest.mark.parametrize("pattern", ["^(a+)+$", r"^(\w+\s?)*$", "^((ab)*)+$", "(x+x+)+y"])
def test_catastrophic_patterns_are_a_schema_problem(pattern: str) -> None:
    schema = {"type": "object", "properties": {"s": {"type": "string", "pattern": pattern, "minLength": 30}}}
    with pytest.raises(SchemaProblem) as info:
        compile_schema(schema, name="spell")
    assert info.value.reason == "slow-pattern"
    assert "/properties/s/pattern" in str(info.value) and "spell" in str(info.value)


@pytest.mark.parametrize("pattern", [r"^([a-z]+,)*[a-z]+$", r"^(ab|cd)+$", r"^[a-z]+(-[a-z]+)*$", r"^(\d{3})+$"])
def test_safe_repeats_are_not_refused(pattern: str) -> None:
    _ecma.check(pattern)


def test_feeler_cases_ends_with_a_clear_problem_on_a_catastrophic_pattern(tmp_path: pathlib.Path) -> None:
    path = tmp_path / "spell.json"
    path.write_text(json.dumps({"type": "object", "properties": {"s": {"type": "string", "pattern": "^(a+)+$", "minLength": 30}}}))
    result = CliRunner().invoke(cases, [str(path)])
    assert result.exit_code != 0
    assert "exponential time" in result.output + (result.stderr or "")


def test_invalid_ecma_syntax_is_a_schema_problem() -> None:
    with pytest.raises(SchemaProblem) as info:
        compile_schema({"type": "object", "properties": {"s": {"type": "string", "pattern": "(?P<x>a)"}}})
    # The metaschema's "regex" format, read the ECMA-262 way, refuses Python's (?P<name>...) group syntax.
    assert info.value.reason in ("invalid-schema", "invalid-pattern")
    assert "/properties/s/pattern" in str(info.value)


def test_random_ascii_texts_agree_with_regress() -> None:
    rng = random.Random(5)
    alphabet = "aZ09_ -\n\r\t\u00e9\u0661\ufeff"
    for pattern in (r"^\w+$", r"^\d*$", r"^\s?\S+$", r"^[^\w]+$", r"a.b$", r"\b\w"):
        for _ in range(60):
            text = "".join(rng.choice(alphabet) for _ in range(rng.randint(0, 5)))
            assert _ecma.search(pattern, text) == ecma_search(pattern, text), (pattern, text)  # regress
