"""Anchored verdicts without a server: bases of no-go cases and of on-bound go cases.

References: JSON Schema 2020-12 validation 6.2 (``minimum``/``maximum`` are inclusive), 6.3
(``minLength``/``maxLength``); every base is checked with ``jsonschema`` (the reference validator);
RFC 6901 for the places.
"""

from __future__ import annotations

import jsonschema

from feeler.generate import Case
from feeler.world.anchor import ToolWorld, inside_arguments

SCHEMA = {
    "type": "object",
    "properties": {"root": {"type": "string", "minLength": 2, "maxLength": 4}, "depth": {"type": "integer", "minimum": 0, "maximum": 5}},
    "required": ["root"],
}


def _go(keyword: str, path: str, arguments: dict) -> Case:
    return Case("go", keyword, path, f"/properties/{path[2:]}/{keyword}", arguments)


def test_the_base_of_an_on_bound_case_is_one_step_inside() -> None:
    cases = {
        "minimum": ({"root": "ab", "depth": 0}, {"root": "ab", "depth": 1}),
        "maximum": ({"root": "ab", "depth": 5}, {"root": "ab", "depth": 4}),
    }
    for keyword, (on_bound, inside) in cases.items():
        assert inside_arguments(SCHEMA, _go(keyword, "$.depth", on_bound)) == inside
        jsonschema.validate(inside, SCHEMA)
    assert inside_arguments(SCHEMA, _go("minLength", "$.root", {"root": "ab"})) == {"root": "abb"}
    assert inside_arguments(SCHEMA, _go("maxLength", "$.root", {"root": "abcd"})) == {"root": "abc"}
    assert inside_arguments(SCHEMA, _go("pattern", "$.root", {"root": "ab"})) is None  # not a bound


def test_no_go_verdicts_need_an_entered_base() -> None:
    world = ToolWorld()
    broken = Case("no-go", "type", "$.depth", "/properties/depth/type", {"root": "ok", "depth": "1"})

    class Refused:  # an isError result (MCP 2025-11-25 server/tools, "Error Handling")
        error = None
        result = {"content": [{"type": "text", "text": "no"}], "isError": True}
        is_error_result = True
        input_required = False

    assert world.note_nogo(broken, Refused()) == "unattributed"
    world.entered.append({"root": "ok", "depth": 1})
    assert world.base_of(broken) == {"root": "ok", "depth": 1}
    assert world.note_nogo(broken, Refused()) == "stopped"
    other_root = Case("no-go", "type", "$.depth", "/properties/depth/type", {"root": "elsewhere", "depth": "1"})
    assert world.base_of(other_root) is None  # differs from every entered base beyond the broken place
    assert world.attributable_share() == 0.5
