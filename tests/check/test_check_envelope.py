"""envelope and result_shape: each against a real server that breaks the rule and one that keeps it.

References: JSON-RPC 2.0 specification section 5 (response object: "jsonrpc" MUST be exactly "2.0", id
REQUIRED and the same as the request's, exactly one of result/error) and section 5.1 (error object: code
an integer, message a string); MCP 2025-11-25 server/tools (CallToolResult, TextContent) with
``mcp-types`` as the reference for result shapes.
"""

from __future__ import annotations

import json

import pytest
from check_helpers import classes, faulty, run_checks

from feeler.check.registry import CHECKS, CallContext, CheckSettings
from feeler.connect import connected


# JSON-RPC 2.0 section 5: every call above is answered by a clean envelope.
def test_envelope_clean_server_has_no_findings() -> None:
    report = run_checks(faulty("clean"), ["envelope"])
    assert report.tools["echo"].go_calls > 0 and report.tools["echo"].nogo_calls > 0  # answers were looked at
    assert not list(report.findings)


@pytest.mark.parametrize(
    ("fault", "error_class"),
    [
        ("jsonrpc-1.0", "jsonrpc-version"),  # JSON-RPC 2.0 section 5: "jsonrpc" MUST be exactly "2.0"
        ("result-and-error", "result-xor-error"),  # section 5: result and error MUST NOT both be present
        ("bad-error-object", "error-code-type"),  # section 5.1: code MUST be an integer
        ("bad-error-object", "error-message-type"),  # section 5.1: message SHOULD be a (single-sentence) string
    ],
)
def test_envelope_finds_broken_answers(fault: str, error_class: str) -> None:
    report = run_checks(faulty(fault), ["envelope"], samples=1)
    assert error_class in classes(report, "envelope")
    assert all(f.severity == "error" for f in report.findings)


def _raw_call_context(fault: str) -> CallContext:
    """A tools/call sent raw (send_raw accepts any answer) to a real server, as a CallContext."""
    with connected(faulty(fault), timeout=5.0) as session:
        request = {"jsonrpc": "2.0", "id": 7, "method": "tools/call", "params": {"name": "echo", "arguments": {"text": "hi"}}}
        exchange = session.send_raw(json.dumps(request), timeout=5.0)
        return CallContext("go", None, str(session.revision), str(session.era), CheckSettings(), exchange=exchange)


@pytest.mark.parametrize(
    ("fault", "error_class"),
    [
        ("string-id", "id-echo"),  # JSON-RPC 2.0 section 5: id "MUST be the same as" the request's (7 is not "7")
        ("no-id", "missing-id"),  # JSON-RPC 2.0 section 5: id is REQUIRED
    ],
)
def test_envelope_finds_wrong_ids(fault: str, error_class: str) -> None:
    ctx = _raw_call_context(fault)
    assert ctx.exchange is not None and ctx.exchange.response is not None
    assert error_class in {p.error_class for p in CHECKS["envelope"].run(ctx)}


def test_envelope_accepts_the_echoed_id() -> None:
    # JSON-RPC 2.0 section 5: the clean server echoes id 7 as the integer 7.
    ctx = _raw_call_context("clean")
    assert ctx.exchange is not None and ctx.exchange.response["id"] == 7
    assert CHECKS["envelope"].run(ctx) == []


# MCP 2025-11-25 and 2026-07-28 server/tools: TextContent requires "text"; mcp-types validates CallToolResult.
# At 2026-07-28 mcp-types' surface is CallToolResult | InputRequiredResult, and the lenient second member
# used to swallow every broken final result (fixed in builtin._shape_errors).
@pytest.mark.parametrize("revision", ["2025-11-25", "2026-07-28"])
def test_result_shape_finds_a_text_block_without_text(revision: str) -> None:
    report = run_checks(faulty("bad-content"), ["result_shape"], samples=1, revision=revision)
    assert report.revision == revision
    findings = [f for f in report.findings if f.check == "result_shape"]
    assert findings and {f.error_class for f in findings} == {"shape"}
    assert any("text" in f.message for f in findings)


def test_result_shape_clean_server_has_no_findings() -> None:
    report = run_checks(faulty("clean"), ["result_shape"])
    assert report.tools["echo"].go_calls > 0
    assert not list(report.findings)


def test_result_shape_follows_the_negotiated_revision() -> None:
    # mcp-types: a 2026-07-28 CallToolResult needs "resultType" (MCP 2026-07-28 basic/index#resulttype);
    # the same answer without it is fine at 2025-11-25.
    result = {"content": [{"type": "text", "text": "hi"}]}
    from feeler.check.builtin import _shape_errors

    assert _shape_errors("tools/call", "2025-11-25", result) == []
    assert _shape_errors("tools/call", "2026-07-28", result)
    assert _shape_errors("tools/call", "2026-07-28", {**result, "resultType": "complete"}) == []


@pytest.mark.parametrize("revision", ["2024-11-05", "2025-06-18", "2025-11-25", "2026-07-28"])
def test_result_shape_gives_mcp_types_verdict_for_every_text_only_result(revision: str) -> None:
    """Results made only of text blocks get mcp-types' verdict asked once per form (the number of blocks,
    isError), since TextContent constrains its text to be a string and nothing more. Every such result,
    whatever its texts, gets exactly the verdict pydantic gives it directly (mcp-types as the reference);
    results of any other shape are still validated one by one."""
    from hypothesis import HealthCheck, given, settings
    from hypothesis import strategies as st

    from feeler.check.builtin import _shape_validator, _TEXT_FORM_VERDICTS, _shape_errors, _text_form

    validator = _shape_validator("tools/call", revision)

    def direct(result: dict) -> bool:
        try:
            validator.validate_python(result, by_name=False)
        except Exception:  # noqa: BLE001 - pydantic's ValidationError: the reference says invalid
            return False
        return True

    texts = st.text(max_size=20)
    results = st.fixed_dictionaries(
        {"content": st.lists(st.builds(lambda t: {"type": "text", "text": t}, texts), max_size=3)},
        optional={"isError": st.booleans()},
    )

    @settings(max_examples=60, deadline=None, database=None, suppress_health_check=list(HealthCheck))
    @given(results)
    def same_verdict(result: dict) -> None:
        assert _text_form(result) is not None
        assert (not _shape_errors("tools/call", revision, result)) == direct(result)

    _TEXT_FORM_VERDICTS.clear()
    same_verdict()
    assert any(key[1] == revision for key in _TEXT_FORM_VERDICTS)  # the verdicts were kept and reused
    # Not the text form (another block type, an extra key, a non-boolean isError, a missing text): validated as is.
    for other in ({"content": [{"type": "image", "data": "", "mimeType": "image/png"}]},
                  {"content": [{"type": "text", "text": "a", "annotations": {"priority": 2}}]},
                  {"content": [{"type": "text", "text": "a"}], "isError": "yes"},
                  {"content": [{"type": "text"}]}, {"content": [], "structuredContent": {}}):  # fmt: skip
        assert _text_form(other) is None
        assert (not _shape_errors("tools/call", revision, other)) == direct(other)


def test_check_reports_a_wrong_id_on_tools_call_as_an_envelope_finding() -> None:
    # JSON-RPC 2.0 section 5: the answer's id must echo the request's, type included. The session stops
    # waiting at once (an id it never sent), and the runner hands the answer to the envelope check.
    report = run_checks(faulty("string-id"), ["envelope", "no_crash"], samples=1)
    found = {(f.check, f.error_class) for f in report.findings}
    assert ("envelope", "id-echo") in found
    assert not any(f.check == "no_crash" for f in report.findings)
