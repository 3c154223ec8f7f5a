"""Output baselines: deepdiff comparison with path and pattern masks."""

from __future__ import annotations

import pytest

from feeler.diff import OutputMasks, apply_masks, compare_outputs
from feeler.errors import UsageError


def rec(tool: str, result: object, **args: object) -> dict:
    return {"tool": tool, "arguments": args, "result": result}


def test_path_masks_with_wildcards() -> None:
    masks = OutputMasks(("$.structuredContent.issuedAt", "$.content[*].id", "$.rows.*.stamp"))
    value = {"structuredContent": {"issuedAt": "t1", "n": 1}, "content": [{"id": 1}, {"id": 2}],
             "rows": {"a": {"stamp": 1, "k": 2}}}
    assert apply_masks(value, masks) == {"structuredContent": {"issuedAt": "<masked>", "n": 1},
                                         "content": [{"id": "<masked>"}, {"id": "<masked>"}],
                                         "rows": {"a": {"stamp": "<masked>", "k": 2}}}
    assert value["content"][0]["id"] == 1  # the input is not modified


def test_pattern_masks_hide_volatile_fragments() -> None:
    masks = OutputMasks(patterns=(r"\d{4}-\d\d-\d\dT[0-9:]+Z",))
    old = [rec("quote", {"content": [{"type": "text", "text": "at 2026-01-02T10:00:00Z: 40 EUR"}]})]
    new = [rec("quote", {"content": [{"type": "text", "text": "at 2026-03-04T11:11:11Z: 40 EUR"}]})]
    assert compare_outputs(old, new, masks) == []
    assert [str(c) for c in compare_outputs(old, new)] == [
        """quote {}: '/content/0/text' "at 2026-01-02T10:00:00Z: 40 EUR" -> "at 2026-03-04T11:11:11Z: 40 EUR\"""",
    ]


def test_readable_changes() -> None:
    old = [rec("fee", {"structuredContent": {"total": 3, "lines": [1]}}, n=1), rec("gone", {})]
    new = [rec("fee", {"structuredContent": {"total": "3", "lines": [1, 2], "extra": True}}, n=1), rec("new", {})]
    got = [str(c) for c in compare_outputs(old, new)]
    assert got == [
        """fee {"n": 1}: '/structuredContent/extra' added: true""",
        """fee {"n": 1}: '/structuredContent/lines/1' added: 2""",
        """fee {"n": 1}: '/structuredContent/total' 3 -> "3\"""",
        "gone {}: case removed",
        "new {}: case added",
    ]


def test_config_keys_and_bad_masks() -> None:
    masks = OutputMasks.from_config({"output_masks": ["$.a"], "output_mask_patterns": ["x+"]})
    assert masks.paths == ("$.a",) and masks.patterns == ("x+",)
    with pytest.raises(UsageError, match="must start with"):
        OutputMasks(("a.b",))
    with pytest.raises(UsageError, match="not a regular expression"):
        OutputMasks(patterns=("(",))
    with pytest.raises(UsageError, match="output_masks"):
        OutputMasks.from_config({"output_masks": "$.a"})


def test_masks_may_be_typed_as_json_pointers() -> None:
    # RFC 6901 pointers and $-paths name the same places; users may type either (our vocabulary rule).
    value = {"structuredContent": {"issuedAt": "t1", "n": 1}, "content": [{"id": 1}, {"id": 2}]}
    by_pointer = apply_masks(value, OutputMasks(("/structuredContent/issuedAt", "/content/*/id")))
    by_path = apply_masks(value, OutputMasks(("$.structuredContent.issuedAt", "$.content[*].id")))
    assert by_pointer == by_path and by_pointer["structuredContent"]["issuedAt"] == "<masked>"
