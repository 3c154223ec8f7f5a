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
from feeler.generate._strategies import draws, pattern_strings
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


NESTED = "nests an open-ended repeat inside another"
SAME = "repeats alternatives that can match the same text"
SPLITS = "repeats a part whose matches can be split in more than one way"
# (pattern, the shape named): each takes exponential time on a near miss in a backtracking engine (common
# practice, the shapes of regular expression denial of service); "x|[xy]" is one class to Python's parser
# but two alternatives to the regex engine, which backtracks over both.
CATASTROPHIC = [
    ("^(a+)+$", NESTED), (r"^(\w+\s?)*$", NESTED), ("^((ab)*)+$", NESTED), ("(x+x+)+y", NESTED),
    ("^(a|a)*$", SAME), (r"^(\w|\d)+$", SAME), (r"^(?:x|[x-y])+$", SAME), (r"^(?:[a-z]|[a-z0-9]){10,}$", SAME),
    ("^(.*a){20}$", SPLITS), ("^(a{1,30}){1,30}$", SPLITS), (r"^(\d|1\d)+$", SPLITS), (r"^(?:\d|\d\d)+$", SPLITS),
    ("^(aa?)*$", SPLITS), ("^(.*,)+$", SPLITS), ("^((a{1,5}){1,5}){1,5}$", SPLITS), ("(a|b|ab)*c", SPLITS),
]  # fmt: skip


@pytest.mark.parametrize(("pattern", "shape"), CATASTROPHIC)
def test_catastrophic_patterns_are_a_schema_problem(pattern: str, shape: str) -> None:
    schema = {"type": "object", "properties": {"s": {"type": "string", "pattern": pattern, "minLength": 30}}}
    with pytest.raises(SchemaProblem) as info:
        compile_schema(schema, name="spell")
    assert info.value.reason == "slow-pattern"
    assert "/properties/s/pattern" in str(info.value) and "spell" in str(info.value)
    assert f"pattern {pattern!r} {shape}" in str(info.value)


# Repeats whose rounds split a text one way only (a delimiter, disjoint alternatives, a fixed length), a few
# rounds of an ambiguous part, and common real-world shapes (e-mail, IPv4, slugs, dotted names, base64).
SAFE = [
    r"^([a-z]+,)*[a-z]+$", r"^(ab|cd)+$", r"^[a-z]+(-[a-z]+)*$", r"^(\d{3})+$", r"^([^,]+,)*[^,]+$", r"^(ab|a)*$",
    r"^(a|ab)*$", r"^(ab|ac)+$", r"^(xb|y)*$", r"^((?:x|y)c*)+$", r"^(x(a+|b))+$", r"^(\s*\w+\s*,)*$",
    r"^(?:[a-z]+|[0-9]+)(?:-(?:[a-z]+|[0-9]+))*$", r"^([a-z0-9]+\.)+[a-z]{2,}$", r"^[\w.-]+(/[\w.-]+)*$",
    r"^((25[0-5]|2[0-4][0-9]|[01]?[0-9][0-9]?)\.){3}(25[0-5]|2[0-4][0-9]|[01]?[0-9][0-9]?)$",
    r"^[a-z0-9!#$%&'*+/=?^_`{|}~-]+(?:\.[a-z0-9!#$%&'*+/=?^_`{|}~-]+)*@(?:[a-z0-9](?:[a-z0-9-]*[a-z0-9])?\.)+[a-z]{2,}$",
    r"^(?:[A-Za-z0-9+/]{4})*(?:[A-Za-z0-9+/]{2}==|[A-Za-z0-9+/]{3}=)?$", r"^v?(\d+\.)?(\d+\.)?(\*|\d+)$",
    r"^(.*a){3}$", r"^(a|a){3}$", r"^(\w+\.)*\w+$",
]  # fmt: skip


@pytest.mark.parametrize("pattern", SAFE)
def test_safe_repeats_are_not_refused(pattern: str) -> None:
    _ecma.check(pattern)


# -- every match of a schema's pattern runs in the regex engine under a time budget ------------------------

CHAINED = "^" + "(a|a)" * 30 + "$"  # no repeat: no shape check refuses it; 2**30 ways to try a near miss


def test_a_pattern_the_shape_check_passes_still_ends_within_its_budget(monkeypatch: pytest.MonkeyPatch) -> None:
    """The budget of each match (here a tenth of a second) ends a near miss on CHAINED in the regex engine,
    and the pattern is remembered: the next match fails at once (JSON Schema 2020-12 validation 6.3.3)."""
    _ecma.check(CHAINED)  # the shape check does not see it
    assert _ecma.search(CHAINED, "a" * 30)  # a match is found at once
    monkeypatch.setattr(_ecma._BUDGET, "budget", 0.1)
    monkeypatch.setattr(_ecma, "_SLOW", set())
    with pytest.raises(_ecma.SlowPattern) as info:
        _ecma.search(CHAINED, "a" * 29 + "!")
    assert info.value.reason == "slow-pattern" and isinstance(info.value, SchemaProblem)
    assert "took more than 0.1s to match one value" in str(info.value)
    assert CHAINED in _ecma._SLOW
    with pytest.raises(_ecma.SlowPattern):
        _ecma.search(CHAINED, "a" * 30)  # remembered: not matched again


def test_a_shared_budget_is_spent_by_all_matches_and_forgets_nothing() -> None:
    """Inside a budget block (an answer's validation, feeler.check.schemas) the matches share the time,
    and a pattern that ran out of it is not remembered as slow (others may have used the time)."""
    with pytest.raises(_ecma.SlowPattern), _ecma.budget(0.1):
        _ecma.search(CHAINED, "a" * 29 + "!")
    assert CHAINED not in _ecma._SLOW
    with _ecma.budget(0.5):
        assert _ecma.search("^[a-z]+$", "abc")


def test_feeler_cases_names_a_pattern_that_ran_past_its_budget(tmp_path: pathlib.Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """The no-go cases' near misses run CHAINED past its budget: one line naming the pattern, no traceback."""
    monkeypatch.setattr(_ecma._BUDGET, "budget", 0.1)
    monkeypatch.setattr(_ecma, "_SLOW", set())
    path = tmp_path / "chained.json"
    path.write_text(json.dumps({"type": "object", "properties": {"s": {"type": "string", "pattern": CHAINED}}, "required": ["s"]}))
    result = CliRunner().invoke(cases, [str(path)])
    assert result.exit_code == 2, result.output  # click: a usage error
    assert "took more than 0.1s to match one value" in result.output and "[slow-pattern]" in result.output


@pytest.mark.parametrize("pattern", PATTERNS + [r"^(?<y>\d)\k<y>$", r"^[^]$", r"x", r"(?<=a)b", r"^[\u0100-\u0200]+$"])
def test_hypothesis_strings_for_a_pattern_match_under_ecma(pattern: str) -> None:
    """The hypothesis strategy of a pattern's strings (drawn from its parse tree, confirmed by the budgeted
    matcher instead of hypothesis' own filter, which matches with Python's re) gives only matches."""
    for ascii_only in (False, True):
        values = draws(pattern_strings(pattern, ascii=ascii_only), 20, seed=3)
        assert values
        assert all(ecma_search(pattern, v) for v in values), values  # regress: ECMA-262
        if ascii_only:
            assert all(32 <= ord(c) <= 126 for v in values for c in v if pattern != r"^[\u0100-\u0200]+$"), values


def test_unevaluated_properties_reads_pattern_properties_the_ecma_way() -> None:
    """2020-12 core 11.3: a key ``patternProperties`` matches is evaluated; ``ab\n`` is not matched by
    ``^[a-z]+$`` under ECMA-262 (``$`` only at the end), so ``unevaluatedProperties: false`` refuses it
    (Python's re, which jsonschema uses there, would match it)."""
    for dialect in ("https://json-schema.org/draft/2020-12/schema", "https://json-schema.org/draft/2019-09/schema"):
        ts = ToolSchema({"$schema": dialect, "type": "object", "patternProperties": {"^[a-z]+$": {"type": "integer"}},
                         "unevaluatedProperties": False})  # fmt: skip
        assert ts.is_valid({"ab": 1})
        assert not ts.is_valid({"ab\n": 1})
        assert [e.validator for e in ts.errors({"ab\n": 1})] == ["unevaluatedProperties"]


UNEVALUATED = [  # schemas whose patterns mean the same to Python's re and ECMA-262 (ASCII, no $ before "\n")
    {"type": "object", "properties": {"a": {}}, "patternProperties": {"^x": {"type": "integer"}}, "unevaluatedProperties": False},
    {"type": "object", "allOf": [{"patternProperties": {"^x": {}}}], "anyOf": [{"properties": {"b": {}}}, {"required": ["c"]}],
     "unevaluatedProperties": {"type": "string"}},
    {"type": "object", "if": {"required": ["k"]}, "then": {"patternProperties": {"^t": {}}}, "else": {"properties": {"e": {}}},
     "dependentSchemas": {"d": {"properties": {"dd": {}}}}, "unevaluatedProperties": False},
    {"type": "object", "$ref": "#/$defs/base", "$defs": {"base": {"patternProperties": {"^r": {}}, "additionalProperties": {"type": "integer"}}},
     "unevaluatedProperties": False},
]  # fmt: skip
INSTANCES = [{}, {"a": 1}, {"x1": 2}, {"x1": "s"}, {"b": 1, "z": 2}, {"c": 1, "z": "s"}, {"k": 1, "t1": 1}, {"t1": 1},
             {"e": 1, "f": 1}, {"d": 1, "dd": 1}, {"r": 1, "q": 2}, {"r": 1, "q": "s"}]  # fmt: skip


@pytest.mark.parametrize("dialect", ["https://json-schema.org/draft/2020-12/schema", "https://json-schema.org/draft/2019-09/schema"])
def test_unevaluated_properties_agrees_with_jsonschema(dialect: str) -> None:
    """Where Python's re and ECMA-262 agree, the oracle's unevaluatedProperties (its own reader of evaluated
    keys, each pattern through the budgeted matcher) judges exactly as jsonschema does, messages included."""
    import jsonschema

    for schema in UNEVALUATED:
        schema = {"$schema": dialect, **schema}
        reference = jsonschema.validators.validator_for(schema)(schema)
        ts = ToolSchema(schema)
        for instance in INSTANCES:
            ours = sorted(e.message for e in ts.errors(instance))
            theirs = sorted(e.message for e in reference.iter_errors(instance))
            assert ours == theirs, (schema, instance)


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
