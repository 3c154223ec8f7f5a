"""``feeler check`` against two third-party servers runs to the end; every finding is pinned and reviewed by hand.

Each expected finding carries the reason it is real (or tolerated). A finding is compared as it is reported
since findings on several tools were merged into one: severity, check, the tools it lists, and its error class.
When feeler or a server changes, the set changes and this test fails: review the difference, then update
the set with a reason. Part of the default run (about 15 s together), so drift shows in CI; the audit of the
same servers (catalog only) is pinned in test_audit.py.

References: JSON-RPC 2.0 section 5.1 (-32602 invalid params vs -32603 internal error); MCP 2025-11-25
server/tools (error handling; execution.taskSupport; Security: descriptions are untrusted); PROTOCOL.md
sections 4, 5.4, 9, 11; third-party servers mcp-server-time (PyPI) and @modelcontextprotocol/server-everything (npm).
"""

from __future__ import annotations

import shutil
from pathlib import Path
from typing import Any

import pytest
from check_helpers import cli_json

pytestmark = [pytest.mark.thirdparty]

EVERYTHING = Path(__file__).resolve().parents[2] / "third_party_servers" / "node_modules" / ".bin" / "mcp-server-everything"


def _found(report: dict[str, Any]) -> set[tuple[str, str, tuple[str, ...], str]]:
    """(severity, check, tools listed, error class) of every finding."""
    return {(f["severity"], f["check"], tuple(sorted(f["tools"])), f["signature"].split("|")[-1]) for f in report["findings"]}


# mcp-server-time (PyPI; built on the official Python SDK), reviewed again 2026-12-04.
TIME_TOOLS = ("convert_time", "get_current_time")
TIME_EXPECTED = {
    # Real: both tools take IANA time zone names, but their inputSchema says only {"type": "string"}; every
    # go case is refused with isError: "" as "Missing required argument" (no minLength: 1 says so) and any
    # other string as "Invalid timezone". The schema promises more than the tools accept (an enum, a
    # pattern or minLength would be honest). One finding listing both tools.
    ("error", "gate_opens", TIME_TOOLS, "rejects-all"),
    # Tolerated SDK behaviour (PROTOCOL.md 11): "arguments": null refused with isError, not -32602.
    ("warning", "probe_answer", TIME_TOOLS, "arguments-null:is-error"),
    # Tolerated: the Python SDK's stdio reader drops an unparsable line and a batch without answering
    # (JSON-RPC 2.0 section 5 wants -32700 / -32600 with id null; common practice on stdio).
    ("warning", "probe_answer", (), "not-json:silent"),
    ("warning", "probe_answer", (), "batch-forbidden:silent"),
}


@pytest.mark.skipif(shutil.which("mcp-server-time") is None, reason="mcp-server-time is not installed (pip install mcp-server-time)")
def test_mcp_server_time(tmp_path: Path) -> None:
    code, report = cli_json(["--samples", "5", "--replay-dir", str(tmp_path), "--", shutil.which("mcp-server-time") or ""])
    assert code in (0, 1)  # ran to the end (2 would be a connection error, 3 a feeler bug)
    assert set(report["tools"]) == set(TIME_TOOLS)
    got = _found(report)
    assert got == TIME_EXPECTED, {"new": sorted(got - TIME_EXPECTED), "gone": sorted(TIME_EXPECTED - got)}


# @modelcontextprotocol/server-everything (npm; TypeScript SDK), reviewed again 2026-12-04.
# Excluded: trigger-long-running-operation (sleeps `duration` seconds per call, 10 s by default).
# GZIP_ALLOWED_DOMAINS=127.0.0.1 keeps gzip-file-as-resource off the network, and its `data` gets a data: URL
# from the world (--value), which the tool fetches without a network; so its gate opens as a user's would.
_CALLED = (
    "echo", "get-annotated-message", "get-env", "get-resource-links", "get-resource-reference", "get-structured-content",
    "get-sum", "get-tiny-image", "gzip-file-as-resource", "toggle-simulated-logging", "toggle-subscriber-updates",
)
#: declares execution.taskSupport "required": not called (feeler sends no task), said in its skip reason
TASK_TOOL = "simulate-research-query"
EVERYTHING_EXPECTED = {
    # Real: a tools/call whose params break CallToolRequest (no params; "arguments" an array, a string or
    # null) is answered -32603 (the TS SDK's zod error thrown as an internal error). JSON-RPC 2.0 section 5.1
    # and MCP 2025-11-25 server/tools: malformed params are -32602 (invalid params), not an internal error.
    # One finding per malformed request, listing every tool called (not one per tool).
    ("error", "probe_answer", (), "missing-params:code"),
    *{("error", "probe_answer", _CALLED, f"arguments-{kind}:code") for kind in ("array", "string", "null")},
    # Tolerated (PROTOCOL.md 5.4, 11): an unknown tool answered with isError, not -32602.
    ("warning", "probe_answer", (), "unknown-tool:is-error"),
    # Tolerated: unparsable line and batch left unanswered on stdio (as the Python SDK does).
    ("warning", "probe_answer", (), "not-json:silent"),
    ("warning", "probe_answer", (), "batch-forbidden:silent"),
    # Real (catalog): get-resource-reference's `resourceType` has no description; the enum alone says little.
    ("warning", "descriptions", ("get-resource-reference",), "parameters"),
    # Real (catalog, a warning): the default of gzip-file-as-resource's `data` is a URL on a host the user did
    # not list, which the tool fetches when a model calls it with the default.
    ("warning", "poisoned_text", ("gzip-file-as-resource",), "foreign-link:inputSchema/properties/data/default"),
}
# Gone since the last review, and why: failure_as_success on get-annotated-message ("Error: Operation failed"
# is its demo text for messageType "error": the wording repeats a value sent, the call did what was asked);
# values_needed / gate_opens on simulate-research-query (taskSupport "required": not called, skip reason);
# gate_opens on gzip-file-as-resource (caused by our own GZIP_ALLOWED_DOMAINS; the data: URL opens it).


@pytest.mark.skipif(not EVERYTHING.exists(), reason=f"server-everything is not installed at {EVERYTHING} (npm install in third_party_servers)")
@pytest.mark.skipif(shutil.which("node") is None, reason="node is not on PATH")
def test_server_everything(tmp_path: Path) -> None:
    code, report = cli_json([
        "--samples", "5", "--replay-dir", str(tmp_path), "--exclude", "trigger-long-running-operation",
        "--env", "GZIP_ALLOWED_DOMAINS=127.0.0.1", "--value", 'gzip-file-as-resource:data="data:text/plain;base64,aGlnaCB3YXRlcg=="',
        "--", str(EVERYTHING), "stdio",
    ])
    assert code in (0, 1)
    assert set(report["tools"]) == {*_CALLED, TASK_TOOL}
    assert report["restarts"] == 0
    assert "taskSupport: required" in report["tools"][TASK_TOOL]["skipped"]
    assert report["tools"][TASK_TOOL]["go"]["calls"] == 0
    assert report["tools"]["gzip-file-as-resource"]["go"]["entered"] > 0
    got = _found(report)
    assert got == EVERYTHING_EXPECTED, {"new": sorted(got - EVERYTHING_EXPECTED), "gone": sorted(EVERYTHING_EXPECTED - got)}
