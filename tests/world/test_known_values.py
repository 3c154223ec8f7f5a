"""Known values and schema hints, without a server.

References: JSON Schema 2020-12 validation section 9 (``default`` 9.2, ``examples`` 9.5 are annotations:
a validator does not check them, so feeler checks each with ``jsonschema``, the reference validator,
before using it); validation 6.1.3 (``const``); RFC 6901 (JSON Pointer) for places.
"""

from __future__ import annotations

from pathlib import Path

import jsonschema
import pytest

from feeler.config import load_config
from feeler.errors import UsageError
from feeler.world import ValuePool
from feeler.world.hints import add_schema_hints, bad_examples
from feeler.world.known import check_known, known_pool, parse_value_option, split_key
from feeler.world.guidance import property_to_give

SCHEMA = {
    "type": "object",
    "properties": {
        "root": {"type": "string", "minLength": 1},
        "depth": {"type": "integer", "minimum": 0, "maximum": 5, "default": 1},
        "mode": {"const": "fast"},
        "kind": {"type": "string", "enum": ["file", "dir"], "examples": ["file", "folder"], "default": "nope"},
    },
    "required": ["root"],
}
FULL = {"root": "a", "depth": 0, "mode": "fast", "kind": "dir"}


def test_value_options_parse_tool_property_and_json() -> None:
    assert parse_value_option("root=/srv/data") == (None, "root", ["/srv/data"])  # not JSON: a string
    assert parse_value_option("read_file:limit=[1, 10]") == ("read_file", "limit", [1, 10])  # a list: one of these
    assert parse_value_option("$.owner.email=\"a@example.org\"") == (None, "$.owner.email", ["a@example.org"])
    assert parse_value_option("tags=[[\"a\"]]") == (None, "tags", [["a"]])
    assert split_key("$.a:b") == (None, "$.a:b")
    with pytest.raises(UsageError, match="expected \\[TOOL:\\]PROPERTY=JSON"):
        parse_value_option("root")
    with pytest.raises(UsageError, match="not a JSON path"):
        parse_value_option("$..x=1")


def test_config_table_and_hook_fill_the_pool(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    (tmp_path / "myhook.py").write_text(
        "from hypothesis import strategies as st\n"
        "def values():\n    return {'list_entries:depth': st.integers(0, 5)}\n"
    )
    (tmp_path / "pyproject.toml").write_text(
        '[tool.feeler]\nvalues_hook = "myhook:values"\n[tool.feeler.values]\nroot = "/srv/orchard"\n"read_entry:limit" = [1, 10]\n'
    )
    monkeypatch.syspath_prepend(str(tmp_path))
    cfg = load_config(start=str(tmp_path))
    pool = known_pool(["name=apples.txt"], cfg.get("values"), cfg.get("values_hook"), seed=3)
    assert [v.value for v in pool.values_for("any", "/root", "root")] == ["/srv/orchard"]
    assert sorted(v.value for v in pool.values_for("read_entry", "/limit", "limit")) == [1, 10]
    assert pool.values_for("other", "/limit", "limit") == []
    hooked = pool.values_for("list_entries", "/depth", "depth")
    assert hooked and all(0 <= v.value <= 5 and v.source == "known" for v in hooked)
    # The same sample seed draws the same values.
    again = known_pool((), None, cfg.get("values_hook"), seed=3)
    assert [v.value for v in again.values_for("list_entries", "/depth", "depth")] == [v.value for v in hooked]
    with pytest.raises(UsageError, match="cannot import"):
        known_pool((), None, "no_such_module_here:values")


def test_a_known_value_that_breaks_the_schema_is_a_usage_error() -> None:
    pool = known_pool(["depth=9"])
    with pytest.raises(UsageError) as info:
        check_known(SCHEMA, "list_entries", pool, [FULL])
    text = str(info.value)
    # Names the tool, the property, the value and the keyword (jsonschema: 9 > maximum 5).
    assert "'list_entries'" in text and "'depth'" in text and "9" in text and "'maximum'" in text
    check_known(SCHEMA, "list_entries", known_pool(["depth=[0, 5]"]), [FULL])  # both valid: no error
    check_known(SCHEMA, "other", known_pool(["list_entries:depth=9"]), [FULL])  # limited to another tool


def test_schema_hints_are_oracle_checked_values() -> None:
    pool = ValuePool()
    add_schema_hints(SCHEMA, "t", pool, [FULL])
    got = {p: [v.value for v in pool.values_for("t", p)] for p in ("/depth", "/mode", "/kind")}
    # default 1 and const "fast" are valid; "folder" and default "nope" break the enum: not offered.
    assert got == {"/depth": [1], "/mode": ["fast"], "/kind": ["file"]}
    assert all(v.source == "schema" for p in got for v in pool.values_for("t", p))
    for place, values in got.items():
        for value in values:
            jsonschema.validate(value, SCHEMA["properties"][place[1:]])


def test_an_example_that_breaks_its_own_schema_is_found() -> None:
    # Validation 9.5: examples SHOULD validate against the schema they sit in (annotations are not checked).
    assert bad_examples(SCHEMA) == [("/properties/kind/examples/1", "folder", "'folder' is not one of ['file', 'dir']")]
    assert bad_examples({"type": "object", "properties": {"enum": {"examples": [1], "type": "integer"}}}) == []


def test_the_property_to_give_a_value_for() -> None:
    schema = {"type": "object", "properties": {"text": {"type": "string"}, "repo": {"type": "string"}}, "required": ["text", "repo"]}
    assert property_to_give(schema, "outside the allowed repo") == "repo"  # named in the message
    assert property_to_give(schema, "access denied") == "repo"  # path-like name (common practice)
    assert property_to_give({"type": "object", "properties": {"text": {"type": "string"}}, "required": ["text"]}, "no") == "text"
