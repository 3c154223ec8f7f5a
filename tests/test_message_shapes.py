"""Message shapes, per revision, against the reference: ``mcp-types`` (the official wire models).

Outside reference for every check in this module: ``mcp-types`` 2.3 — ``mcp_types.jsonrpc.jsonrpc_message_adapter``
(the JSON-RPC 2.0 envelope), ``mcp_types.methods.validate_client_request`` / ``validate_client_notification``
/ ``validate_server_result`` (bodies at a named revision, with the revision's method gate), and the
per-revision full-frame models in ``mcp_types._v2026_07_28``. The example messages are copies of
PROTOCOL.md section 12 (embedded: CI cannot rely on ../shared beside the clone).
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from typing import Any

import pytest
from mcp_types import _v2026_07_28 as wire2026
from mcp_types.jsonrpc import jsonrpc_message_adapter
from mcp_types.methods import validate_client_notification, validate_client_request, validate_server_result
from pydantic import ValidationError

from feeler.connect import capture, connected

INPROCESS = "feeler.demo.server:server"
HANDSHAKE = ("2024-11-05", "2025-03-26", "2025-06-18", "2025-11-25")
MODERN = "2026-07-28"
#: a read-only demo tool and arguments it accepts (the call is for real: common practice, use a read-only tool)
CALL = ("list_berths", {"zone": "north"})


def _traffic(revision: str) -> list[tuple[dict[str, Any], dict[str, Any] | None]]:
    """Every message feeler sent at *revision* to the in-process demo, paired with its answer."""
    with connected(INPROCESS, revision=revision, timeout=10) as session:
        capture(session)
        session.call_tool(*CALL)
        frames = list(session.log)
    answers = {}
    for frame in frames:
        message = json.loads(frame.text)
        if frame.direction == "in" and "id" in message:
            answers[json.dumps(message["id"])] = message
    return [
        (message, answers.get(json.dumps(message.get("id"))) if "id" in message else None)
        for message in (json.loads(f.text) for f in frames if f.direction == "out")
    ]


@pytest.fixture(scope="module")
def traffic() -> Iterator[dict[str, list[tuple[dict[str, Any], dict[str, Any] | None]]]]:
    yield {revision: _traffic(revision) for revision in (*HANDSHAKE, MODERN)}


@pytest.mark.parametrize("revision", [*HANDSHAKE, MODERN])
def test_every_frame_is_a_json_rpc_message(traffic: dict[str, Any], revision: str) -> None:
    for sent, answer in traffic[revision]:
        # mcp-types jsonrpc_message_adapter: JSON-RPC 2.0 sections 4 and 5 envelopes
        jsonrpc_message_adapter.validate_python(sent)
        if answer is not None:
            jsonrpc_message_adapter.validate_python(answer)


@pytest.mark.parametrize("revision", HANDSHAKE)
def test_handshake_requests_validate_at_their_revision(traffic: dict[str, Any], revision: str) -> None:
    methods = []
    for sent, answer in traffic[revision]:
        method, params = sent["method"], sent.get("params")
        methods.append(method)
        if "id" in sent:
            # mcp-types methods.validate_client_request (includes the revision's method gate)
            validate_client_request(method, revision, params)
            assert answer is not None and "result" in answer, answer
            # mcp-types methods.validate_server_result: the demo's answers are well formed too
            validate_server_result(method, revision, answer["result"])
        else:
            validate_client_notification(method, revision, params)
    assert methods[:2] == ["initialize", "notifications/initialized"]
    assert {"tools/list", "tools/call", "prompts/list", "resources/list"} <= set(methods)
    assert traffic[revision][0][0]["params"]["protocolVersion"] == revision


def test_modern_requests_validate_at_2026_07_28(traffic: dict[str, Any]) -> None:
    frames = {"server/discover": wire2026.DiscoverRequest, "tools/list": wire2026.ListToolsRequest,
              "tools/call": wire2026.CallToolRequest, "prompts/list": wire2026.ListPromptsRequest,
              "resources/list": wire2026.ListResourcesRequest}
    seen = set()
    for sent, answer in traffic[MODERN]:
        assert "id" in sent, "2026-07-28 has no client notification feeler needs here"
        method = sent["method"]
        seen.add(method)
        validate_client_request(method, MODERN, sent.get("params"))  # mcp-types methods, 2026-07-28 gate
        if method in frames:
            frames[method].model_validate(sent)  # mcp-types _v2026_07_28 full frame
        assert answer is not None and "result" in answer, answer
        validate_server_result(method, MODERN, answer["result"])
    assert {"server/discover", "tools/list", "tools/call"} <= seen
    assert traffic[MODERN][0][0]["method"] == "server/discover"


def test_the_validators_can_fail() -> None:
    """Guards against vacuous checks: shapes feeler must never send are rejected by the same calls."""
    with pytest.raises(ValidationError):  # 2026 tools/call without the _meta envelope
        validate_client_request("tools/call", MODERN, {"name": "x", "arguments": {}})
    with pytest.raises(KeyError):  # initialize is gone at 2026-07-28 (version gate)
        validate_client_request("initialize", MODERN, {})
    with pytest.raises(KeyError):  # server/discover does not exist at 2025-11-25
        validate_client_request("server/discover", "2025-11-25", None)
    with pytest.raises(ValidationError):  # JSON-RPC 2.0 section 4: a request id is never null (MCP basic/index)
        wire2026.CallToolRequest.model_validate({"jsonrpc": "2.0", "id": None, "method": "tools/call", "params": {}})


# -- PROTOCOL.md section 12 examples, copied verbatim (their sample data is the digest's, not ours) ---
META_2026 = {
    "io.modelcontextprotocol/protocolVersion": "2026-07-28",
    "io.modelcontextprotocol/clientInfo": {"name": "mcp-tester", "version": "0.1.0"},
    "io.modelcontextprotocol/clientCapabilities": {},
}
SERVER_META = {"io.modelcontextprotocol/serverInfo": {"name": "example-server", "version": "1.2.3"}}
#: (name, message, revision, kind) — kind: request / notification / result (of the named method)
EXAMPLES: list[tuple[str, dict[str, Any], str, str, str]] = [
    ("initialize request", {"jsonrpc": "2.0", "id": 1, "method": "initialize", "params": {"protocolVersion": "2025-11-25", "capabilities": {}, "clientInfo": {"name": "mcp-tester", "version": "0.1.0"}}}, "2025-11-25", "request", "initialize"),
    ("initialize result", {"jsonrpc": "2.0", "id": 1, "result": {"protocolVersion": "2025-11-25", "capabilities": {"tools": {"listChanged": True}, "resources": {}, "prompts": {}, "logging": {}}, "serverInfo": {"name": "example-server", "version": "1.2.3"}, "instructions": "Optional usage hints"}}, "2025-11-25", "result", "initialize"),
    ("initialized", {"jsonrpc": "2.0", "method": "notifications/initialized"}, "2025-11-25", "notification", "notifications/initialized"),
    ("discover request", {"jsonrpc": "2.0", "id": "discover-1", "method": "server/discover", "params": {"_meta": META_2026}}, MODERN, "request", "server/discover"),
    ("discover result", {"jsonrpc": "2.0", "id": "discover-1", "result": {"resultType": "complete", "supportedVersions": ["2026-07-28", "2025-11-25"], "capabilities": {"tools": {"listChanged": True}}, "instructions": "Weather tools.", "ttlMs": 3600000, "cacheScope": "public", "_meta": SERVER_META}}, MODERN, "result", "server/discover"),
    ("unsupported version error", {"jsonrpc": "2.0", "id": "discover-1", "error": {"code": -32022, "message": "Unsupported protocol version", "data": {"supported": ["2026-07-28"], "requested": "2027-01-01"}}}, MODERN, "error", "server/discover"),
    ("tools/call request", {"jsonrpc": "2.0", "id": 7, "method": "tools/call", "params": {"name": "get_weather", "arguments": {"location": "New York"}, "_meta": {**META_2026, "progressToken": "p-7"}}}, MODERN, "request", "tools/call"),
    ("tools/call result", {"jsonrpc": "2.0", "id": 7, "result": {"resultType": "complete", "content": [{"type": "text", "text": "{\"temperature\": 22.5, \"conditions\": \"Partly cloudy\"}"}], "structuredContent": {"temperature": 22.5, "conditions": "Partly cloudy"}, "isError": False, "_meta": SERVER_META}}, MODERN, "result", "tools/call"),
]


@pytest.mark.parametrize("name, message, revision, kind, method", EXAMPLES, ids=[e[0] for e in EXAMPLES])
def test_protocol_examples_round_trip(name: str, message: dict[str, Any], revision: str, kind: str, method: str) -> None:
    text = json.dumps(message)
    # mcp-types jsonrpc_message_adapter: parse the wire text, dump it again, nothing lost or added
    parsed = jsonrpc_message_adapter.validate_json(text)
    again = jsonrpc_message_adapter.dump_python(parsed, mode="json", by_alias=True, exclude_unset=True)
    assert again == message
    # ... and the body is valid at its revision (mcp-types methods)
    if kind == "request":
        validate_client_request(method, revision, message.get("params"))
    elif kind == "notification":
        validate_client_notification(method, revision, message.get("params"))
    elif kind == "result":
        validate_server_result(method, revision, message["result"])
    else:
        assert message["error"]["code"] == -32022  # MCP 2026-07-28 basic/versioning


def test_the_2025_form_of_the_tools_call_result_validates_at_2025_06_18() -> None:
    # PROTOCOL.md section 12: drop resultType and the _meta stamp for 2025-06-18 / 2025-11-25
    result = dict(EXAMPLES[-1][1]["result"])
    del result["resultType"], result["_meta"]
    for revision in ("2025-06-18", "2025-11-25"):
        validate_server_result("tools/call", revision, result)  # mcp-types methods


def test_feeler_builds_the_example_envelope() -> None:
    """feeler's own _meta envelope has the keys of the section 12 example (values differ: client name)."""
    from feeler.session import Session
    from feeler.transport.inprocess import InProcessTransport

    session = Session(InProcessTransport("x", INPROCESS), revision=MODERN)
    params = session.params({"name": "quote_fee", "arguments": {"length_m": 9.5, "nights": 2}}, revision=MODERN)
    assert set(params["_meta"]) == set(META_2026)
    validate_client_request("tools/call", MODERN, params)  # mcp-types methods, 2026-07-28
