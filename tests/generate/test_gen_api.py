"""The public API of feeler.generate is pinned, and the keyword tables are complete and exported."""

from __future__ import annotations

import dataclasses

import feeler.generate as generate
from feeler.generate import BOUNDARIES, MUTATORS, Case, coverage, go_cases, nogo_cases


def test_all_is_pinned() -> None:
    assert sorted(generate.__all__) == sorted([
        "BOUNDARIES", "DEFAULT_RECURSION_DEPTH", "DIALECTS", "MUTATORS", "Case", "GeneratorBugWarning", "KeywordCoverage", "Probe", "Tally", "ToolSchema",
        "arguments", "compile_schema", "coverage", "drawn_cases", "fast_go_cases", "go_cases", "nogo_cases", "protocol_probes",
    ])  # fmt: skip
    for name in generate.__all__:
        assert getattr(generate, name) is not None


def test_case_is_frozen_with_the_documented_fields() -> None:
    fields = {f.name for f in dataclasses.fields(Case)}
    assert {"kind", "keyword", "path", "schema_path", "arguments", "error", "source"} <= fields
    case = go_cases({"type": "object"})[0] if go_cases({"type": "object"}) else Case("go", None, "$", "", {})
    try:
        case.kind = "no-go"  # type: ignore[misc]
    except dataclasses.FrozenInstanceError:
        pass
    else:  # pragma: no cover
        raise AssertionError("Case must be frozen")


def test_tables_name_their_keywords_and_have_docstrings() -> None:
    for table in (MUTATORS, BOUNDARIES):
        for keyword, fn in table.items():
            assert fn.__name__.rstrip("_") == keyword, keyword
            assert fn.__doc__, keyword


def test_coverage_explains_the_empty_schema() -> None:
    schema = {"type": "object", "properties": {"free": {}, "n": {"type": "integer", "minimum": 0, "minLength": 0}}}
    entries = {(e.schema_path, e.keyword): e for e in coverage(schema, go_cases(schema) + nogo_cases(schema))}
    assert entries[("/properties/free", "{}")].reason.startswith("the empty schema")
    assert entries[("/properties/n", "minimum")].nogo >= 1 and entries[("/properties/n", "minimum")].go >= 1
    assert "0 is met by every value" in entries[("/properties/n", "minLength")].reason
    assert "protocol probes" in entries[("", "type")].reason
