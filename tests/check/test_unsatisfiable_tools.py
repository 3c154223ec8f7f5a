"""A tool whose input schema accepts no value is a catalog finding naming the contradiction; the run goes on.

References: JSON Schema 2020-12 validation 6.2.2/6.2.4 (minimum, maximum), 6.1.1/6.1.2 (type, enum),
core 4.3.2 (the false schema), 10.2.1.4 (not), 6.3.3 (pattern); MCP 2025-11-25 basic/index "JSON
Schema usage" (fail gracefully, one tool at a time); ``jsonschema`` decides what is valid.
"""

from __future__ import annotations

from check_helpers import run_checks, script


def test_each_unsatisfiable_tool_is_named_and_echo_still_runs() -> None:
    report = run_checks(script("unsatisfiable_schemas.py"), ["schema_usable", "go_enters", "nogo_stops"], samples=2)
    found = {f.tool: f for f in report.findings if f.check == "schema_usable"}
    assert set(found) == {"crossed_bounds", "enum_off_type", "false_property", "no_value_found"}
    assert all(f.error_class == "unsatisfiable" and f.kind == "catalog" for f in found.values())
    # The contradiction is named with its keywords and locations (JSON Pointers).
    assert "/properties/nights/minimum" in found["crossed_bounds"].message
    assert "/properties/nights/maximum" in found["crossed_bounds"].message
    assert "/properties/colour/enum" in found["enum_off_type"].message and "type at /properties/colour/type" in found["enum_off_type"].message
    assert "/properties/hull is false" in found["false_property"].message
    # No keyword pair shows this one: generation searched and found nothing, and says so.
    assert "no value" in found["no_value_found"].message
    for name in found:
        assert report.tools[name].go_calls == 0 and report.tools[name].schema_problem
    # The other tool was tested as usual (MCP 2025-11-25: one bad tool does not stop the others).
    assert report.tools["echo"].go_calls > 0 and report.tools["echo"].nogo_calls > 0
    assert report.tools["echo"].go_entered == report.tools["echo"].go_calls
