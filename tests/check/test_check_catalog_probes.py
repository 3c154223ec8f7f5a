"""schema_usable, tool_name and probe_answer against real servers.

References: MCP 2025-11-25 server/tools (inputSchema: an object schema, "type": "object" at the root; tool
names: 1-128 characters of A-Z a-z 0-9 _ - ., a SHOULD) and basic/index "JSON Schema Usage" (schemas MUST
be valid for their dialect; JSON Schema 2020-12 by default; ``jsonschema`` checks the schema); JSON-RPC 2.0
sections 4.1 (notifications get no answer) and 5.1 (-32601 method not found).
"""

from __future__ import annotations

from check_helpers import classes, faulty, run_checks, sig


def test_schema_usable_clean_server() -> None:
    report = run_checks(faulty("clean"), ["schema_usable", "tool_name"], samples=0)
    assert "echo" in report.tools
    assert not list(report.findings)


def test_schema_usable_finds_an_array_root() -> None:
    report = run_checks(faulty("array-root"), ["schema_usable"], samples=0)
    assert "root-type" in classes(report, "schema_usable")
    assert all(f.kind == "catalog" for f in report.findings)


def test_schema_usable_finds_an_invalid_schema() -> None:
    # JSON Schema 2020-12 validation 6.1.1: "type" values are the seven primitive type names; "text" is none.
    report = run_checks(faulty("invalid-schema"), ["schema_usable"], samples=0)
    assert classes(report, "schema_usable") and "root-type" not in classes(report, "schema_usable")
    assert report.tools["echo"].schema_problem  # and no cases were made from it
    assert report.tools["echo"].go_calls == 0


def test_tool_name_finds_a_bad_name() -> None:
    report = run_checks(faulty("bad-name"), ["tool_name"], samples=0)
    assert [(sig(f), f.severity) for f in report.findings] == [(("tool_name", "echo text!", None, None, "name"), "warning")]


def test_probe_answer_clean_server() -> None:
    # Answers every probe as JSON-RPC 2.0 and MCP prescribe (-32700 for unparsable lines, -32600 for
    # batches and null ids, -32601 for unknown methods, -32602 for non-object arguments, silence for notifications).
    report = run_checks(faulty("strict-probes"), ["probe_answer"], samples=0, probes=True)
    assert report.tools["echo"].probes >= 10
    assert [sig(f) for f in report.findings] == []


def test_probe_answer_finds_a_null_id_served() -> None:
    # MCP 2025-11-25 basic/index: a request id MUST NOT be null; the plain _wire loop serves it anyway.
    report = run_checks(faulty("clean"), ["probe_answer"], samples=0, probes=True)
    assert ("probe_answer", None, None, None, "null-id:accepted") in {sig(f) for f in report.findings}
    # non-object arguments answered with isError: lenient, so only warnings.
    assert {f.severity for f in report.findings if f.tool == "echo"} == {"warning"}


def test_probe_answer_finds_an_answered_notification() -> None:
    # JSON-RPC 2.0 section 4.1: "The Server MUST NOT reply to a Notification".
    report = run_checks(faulty("answers-notifications"), ["probe_answer"], samples=0, probes=True)
    assert {"notification:answered", "unknown-notification:answered"} <= classes(report, "probe_answer")


def test_probe_answer_finds_a_wrong_error_code() -> None:
    # JSON-RPC 2.0 section 5.1: -32601 "Method not found".
    report = run_checks(faulty("wrong-method-code"), ["probe_answer"], samples=0, probes=True)
    assert "unknown-method:code" in classes(report, "probe_answer")
