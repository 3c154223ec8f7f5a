"""Protocol-level no-go probes per revision.

References: JSON-RPC 2.0 specification sections 4 (request, id), 4.1 (notifications get no reply),
5.1 (error codes -32700/-32600/-32601/-32602), 6 (batch); MCP 2025-03-26 basic/index (batches MUST
be receivable), MCP 2025-06-18 changelog (batching removed), MCP 2026-07-28 basic/index (per-request
``_meta`` envelope), MCP 2025-11-25 server/tools (unknown tool -> -32602); mcp-types as the reference
for message shapes.
"""

from __future__ import annotations

import json

import pytest
from mcp_types import jsonrpc_message_adapter

from feeler.errors import UsageError
from feeler.generate import protocol_probes
from feeler.generate.probes import REVISIONS

META = {
    "io.modelcontextprotocol/protocolVersion": "2026-07-28",
    "io.modelcontextprotocol/clientCapabilities": {},
    "io.modelcontextprotocol/clientInfo": {"name": "feeler", "version": "0.1.0"},
}
NAMES = {"unknown-tool", "arguments-array", "arguments-string", "arguments-null", "missing-params", "unknown-param",
         "not-json", "unknown-method", "string-id", "integer-id", "null-id", "notification", "unknown-notification"}  # fmt: skip


@pytest.mark.parametrize("revision", REVISIONS)
def test_probe_set_per_revision(revision: str) -> None:
    probes = {p.name: p for p in protocol_probes(revision, "shelve_book", META if revision == "2026-07-28" else None)}
    assert NAMES <= set(probes)
    # MCP 2025-03-26 basic/index: batches allowed there only; removed from 2025-06-18 on.
    expected_batch = "batch-allowed" if revision == "2025-03-26" else "batch-forbidden"
    assert expected_batch in probes and ({"batch-allowed", "batch-forbidden"} - {expected_batch}).isdisjoint(probes)
    if revision != "2025-03-26":
        assert probes["batch-forbidden"].codes == (-32600,)


@pytest.mark.parametrize("revision", REVISIONS)
def test_probe_lines(revision: str) -> None:
    meta = META if revision == "2026-07-28" else None
    for probe in protocol_probes(revision, "shelve_book", meta):
        if probe.name == "not-json":
            with pytest.raises(json.JSONDecodeError):  # JSON-RPC 2.0 section 5.1: must cause -32700
                json.loads(probe.text)
            assert probe.codes == (-32700,)
            continue
        message = json.loads(probe.text)
        assert "\n" not in probe.text  # stdio framing: one message a line (MCP basic/transports)
        for one in message if isinstance(message, list) else [message]:
            assert one["jsonrpc"] == "2.0"
            params = one.get("params", {})
            if revision == "2026-07-28" and "id" in one and "params" in one:
                assert params["_meta"] == META  # MCP 2026-07-28: every request carries the envelope
            if revision != "2026-07-28":
                assert "_meta" not in params
        if probe.name in ("notification", "unknown-notification"):
            assert "id" not in message and not probe.expects_answer
        elif probe.name not in ("null-id", "batch-allowed", "batch-forbidden"):
            assert message["id"] == probe.id and probe.expects_answer


def test_ids_are_echo_tests() -> None:
    probes = {p.name: p for p in protocol_probes("2025-11-25", "t")}
    assert isinstance(probes["string-id"].id, str) and probes["string-id"].result_ok
    assert probes["integer-id"].id == 2**53 - 1
    assert json.loads(probes["null-id"].text)["id"] is None


def test_well_formed_probes_match_mcp_types_envelopes() -> None:
    # mcp-types as the reference for message shapes: the probes that are meant to be well-formed
    # JSON-RPC (ids, notification, unknown method) parse as JSON-RPC messages.
    probes = {p.name: p for p in protocol_probes("2025-11-25", "t")}
    for name in ("string-id", "integer-id", "unknown-method", "notification", "unknown-tool"):
        jsonrpc_message_adapter.validate_json(probes[name].text)


def test_unknown_revision() -> None:
    with pytest.raises(UsageError, match="2024-11-05"):
        protocol_probes("2023-01-01", "t")


def test_2026_default_envelope() -> None:
    unknown = next(p for p in protocol_probes("2026-07-28", "t") if p.name == "unknown-tool")
    meta = json.loads(unknown.text)["params"]["_meta"]
    assert meta["io.modelcontextprotocol/protocolVersion"] == "2026-07-28"
    assert meta["io.modelcontextprotocol/clientCapabilities"] == {}
