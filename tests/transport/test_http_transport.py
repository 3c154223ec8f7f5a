"""StreamableHTTPTransport against real MCP servers (official SDK, uvicorn on 127.0.0.1).

Servers come from ``conftest.py`` (one subprocess per mode, shared by this module). Messages are raw
JSON-RPC text written here: the transport moves text, so the tests decide every byte and header.
"""

from __future__ import annotations

import json
import time

import httpx2
import pytest

from feeler.errors import ConnectError, RequestTimeout, ResponseTooLarge, UsageError
from feeler.transport.base import Inbound
from feeler.transport.http import StreamableHTTPTransport

INITIALIZE = (
    '{"jsonrpc":"2.0","id":1,"method":"initialize","params":{"protocolVersion":"2025-11-25",'
    '"capabilities":{},"clientInfo":{"name":"transport-tests","version":"0.0.1"}}}'
)
INITIALIZED = '{"jsonrpc":"2.0","method":"notifications/initialized"}'
TOOLS_LIST = '{"jsonrpc":"2.0","id":2,"method":"tools/list"}'
V2025 = {"MCP-Protocol-Version": "2025-11-25"}
MODERN_META = (
    '"_meta":{"io.modelcontextprotocol/protocolVersion":"2026-07-28",'
    '"io.modelcontextprotocol/clientInfo":{"name":"transport-tests","version":"0.0.1"},'
    '"io.modelcontextprotocol/clientCapabilities":{}}'
)
DISCOVER = '{"jsonrpc":"2.0","id":"discover-1","method":"server/discover","params":{' + MODERN_META + "}}"
MODERN_HEADERS = {"MCP-Protocol-Version": "2026-07-28", "Mcp-Method": "server/discover"}


def call(request_id: int, tool: str, arguments: dict) -> str:
    return json.dumps({"jsonrpc": "2.0", "id": request_id, "method": "tools/call",
                       "params": {"name": tool, "arguments": arguments}})


def body(inbound: Inbound) -> dict:
    value = json.loads(inbound.text)
    assert isinstance(value, dict)
    return value


def handshake(transport: StreamableHTTPTransport) -> dict:
    """initialize + notifications/initialized; returns the initialize answer."""
    transport.send(INITIALIZE, timeout=10)
    answer = body(transport.receive(10))
    transport.set_protocol_version("2025-11-25")
    # MCP 2025-11-25 basic/transports, "Sending Messages" 4: an accepted notification gets 202, no body
    transport.send(INITIALIZED, headers=V2025, timeout=10)
    with pytest.raises(RequestTimeout, match="no answer is pending"):
        transport.receive(10)
    return answer


@pytest.fixture
def sse_session(stateful_sse_server):
    transport = StreamableHTTPTransport("sse-server", f"{stateful_sse_server}/mcp")
    transport.open(10)
    handshake(transport)
    yield transport
    transport.close()


# -- handshake era, SSE answers ------------------------------------------------------------------


def test_initialize_answer_arrives_on_an_event_stream(stateful_sse_server):
    with StreamableHTTPTransport("sse-server", f"{stateful_sse_server}/mcp") as transport:
        transport.open(10)
        transport.send(INITIALIZE, timeout=10)
        inbound = transport.receive(10)
        # MCP 2025-11-25 basic/transports, "Sending Messages" 5: the server may answer with text/event-stream
        assert inbound.http_status == 200
        assert inbound.headers["content-type"].startswith("text/event-stream")
        answer = body(inbound)
        # JSON-RPC 2.0 section 5: the response echoes the request id
        assert answer["id"] == 1
        assert answer["result"]["protocolVersion"] == "2025-11-25"
        # MCP 2025-11-25 basic/transports, "Session Management" 1: a stateful server issues Mcp-Session-Id
        assert transport.session_id
        assert inbound.headers["mcp-session-id"] == transport.session_id


def test_after_the_handshake_requests_carry_the_session_id(sse_session):
    # MCP 2025-11-25 basic/transports, "Session Management" 2-3: the client echoes Mcp-Session-Id; without it
    # the SDK server answers 400, so a tools/list result proves the echo
    sse_session.send(TOOLS_LIST, headers=V2025, timeout=10)
    answer = body(sse_session.receive(10))
    assert answer["id"] == 2
    names = {tool["name"] for tool in answer["result"]["tools"]}
    assert {"repeat_word", "bulky_text", "chatty_count", "ping_first"} <= names


def test_tool_call_answer(sse_session):
    sse_session.send(call(3, "repeat_word", {"word": "ab", "times": 3}), headers=V2025, timeout=10)
    answer = body(sse_session.receive(10))
    # MCP 2025-11-25 server/tools, "Calling Tools": result content is a list of content blocks
    assert answer["result"]["content"][0] == {"type": "text", "text": "ab ab ab"}


def test_one_stream_carries_notifications_then_the_result_in_order(sse_session):
    sse_session.send(call(4, "chatty_count", {"steps": 3}), headers=V2025, timeout=10)
    messages = [body(sse_session.receive(10)) for _ in range(4)]
    # MCP 2025-11-25 basic/transports, "Sending Messages" 6: the stream may carry notifications before the response
    assert [m.get("method") for m in messages[:3]] == ["notifications/message"] * 3
    assert [m["params"]["data"] for m in messages[:3]] == ["step 0", "step 1", "step 2"]
    assert messages[3]["id"] == 4 and messages[3]["result"]["content"][0]["text"] == "counted 3"
    # the stream ended after the response (same section, "SHOULD terminate the SSE stream")
    with pytest.raises(RequestTimeout, match="no answer is pending"):
        sse_session.receive(10)


def test_server_request_on_the_stream_is_answered_with_another_post(sse_session):
    sse_session.send(call(5, "ping_first", {}), headers=V2025, timeout=10)
    request = body(sse_session.receive(10))
    # MCP 2025-11-25 basic/transports, "Sending Messages" 6: server requests may arrive on the POST's stream;
    # MCP 2025-11-25 basic/utilities/ping: the receiver answers with an empty result
    assert request["method"] == "ping"
    sse_session.send(json.dumps({"jsonrpc": "2.0", "id": request["id"], "result": {}}), headers=V2025, timeout=10)
    answer = body(sse_session.receive(10))
    assert answer["id"] == 5
    assert answer["result"]["content"][0]["text"] == "client answered the ping"


def test_a_stream_may_stay_silent_longer_than_the_send_timeout(sse_session):
    # the send timeout bounds the wait for the answer's headers only; a slow tool keeps its stream
    sse_session.send(call(6, "chatty_count", {"steps": 2, "pause": 0.6}), headers=V2025, timeout=0.3)
    texts = [body(sse_session.receive(10)) for _ in range(3)]
    assert texts[-1]["id"] == 6 and texts[-1]["result"]["content"][0]["text"] == "counted 2"


def test_receive_gives_up_after_its_own_timeout_and_the_stream_continues(sse_session):
    sse_session.send(call(7, "chatty_count", {"steps": 1, "pause": 1.0}), headers=V2025, timeout=10)
    started = time.monotonic()
    with pytest.raises(RequestTimeout, match="within 0.2s"):
        sse_session.receive(0.2)
    assert time.monotonic() - started < 0.9  # common practice: a timeout must not wait for the server
    assert body(sse_session.receive(10))["method"] == "notifications/message"
    assert body(sse_session.receive(10))["id"] == 7


def test_an_unknown_session_id_comes_back_as_a_404_inbound(sse_session):
    # MCP 2025-11-25 basic/transports, "Session Management" 4: a terminated/unknown session id gets 404.
    # The session's own header wins over the issued id, so a tester can send a wrong one on purpose.
    sse_session.send(TOOLS_LIST, headers={**V2025, "Mcp-Session-Id": "no-such-session"}, timeout=10)
    inbound = sse_session.receive(10)
    assert inbound.http_status == 404
    assert sse_session.session_id  # our own session was not the one refused


def test_close_deletes_the_session(stateful_sse_server):
    url = f"{stateful_sse_server}/mcp"
    transport = StreamableHTTPTransport("sse-server", url)
    transport.open(10)
    handshake(transport)
    session_id = transport.session_id
    assert session_id
    transport.close()
    transport.close()  # idempotent
    assert "ended by DELETE (200)" in transport.diagnostics()
    # MCP 2025-11-25 basic/transports, "Session Management" 4-5: after DELETE the id is unknown -> 404
    answer = httpx2.post(url, content=TOOLS_LIST, headers={
        **V2025, "Mcp-Session-Id": session_id, "Content-Type": "application/json",
        "Accept": "application/json, text/event-stream"}, timeout=10)
    assert answer.status_code == 404


# -- JSON answers, stateless ----------------------------------------------------------------------


def test_json_answers_are_queued_with_status_and_headers(stateful_json_server):
    with StreamableHTTPTransport("json-server", f"{stateful_json_server}/mcp") as transport:
        transport.open(10)
        handshake(transport)
        transport.send(call(3, "repeat_word", {"word": "q"}), headers=V2025, timeout=10)
        inbound = transport.receive(10)
        # MCP 2025-11-25 basic/transports, "Sending Messages" 5: or one application/json object
        assert inbound.http_status == 200
        assert inbound.headers["content-type"].startswith("application/json")
        assert body(inbound)["result"]["content"][0]["text"] == "q"


def test_stateless_server_issues_no_session_and_close_sends_no_delete(stateless_server):
    transport = StreamableHTTPTransport("stateless", f"{stateless_server}/mcp")
    transport.open(10)
    transport.send(INITIALIZE, timeout=10)
    assert body(transport.receive(10))["id"] == 1
    # MCP 2025-11-25 basic/transports, "Session Management" 1: the server MAY assign a session id (this one does not)
    assert transport.session_id is None
    transport.send(TOOLS_LIST, headers=V2025, timeout=10)
    assert body(transport.receive(10))["id"] == 2
    transport.close()
    assert "session id: none" in transport.diagnostics()
    assert "DELETE" not in transport.diagnostics()


# -- 2026-07-28 ----------------------------------------------------------------------------------


def test_modern_discover_with_routing_headers(stateless_server):
    with StreamableHTTPTransport("stateless", f"{stateless_server}/mcp") as transport:
        transport.open(10)
        # MCP 2026-07-28 basic/transports/streamable-http: POST with MCP-Protocol-Version and Mcp-Method headers,
        # and the per-request _meta envelope (MCP 2026-07-28 basic/index)
        transport.send(DISCOVER, headers=MODERN_HEADERS, timeout=10)
        inbound = transport.receive(10)
        assert inbound.http_status == 200
        answer = body(inbound)
        assert answer["id"] == "discover-1"
        # MCP 2026-07-28 server/discover: the result lists supportedVersions
        assert "2026-07-28" in answer["result"]["supportedVersions"]
        # MCP 2026-07-28 basic/transports/streamable-http: no sessions, the server never mints an id
        assert transport.session_id is None


def test_modern_header_mismatch_is_a_400_inbound_with_the_error_body(stateless_server):
    with StreamableHTTPTransport("stateless", f"{stateless_server}/mcp") as transport:
        transport.open(10)
        transport.send(DISCOVER, headers={"MCP-Protocol-Version": "2026-07-28", "Mcp-Method": "tools/list"},
                       timeout=10)
        inbound = transport.receive(10)
        # MCP 2026-07-28 basic/transports/streamable-http, "Validation failures": 400 + -32020 HeaderMismatch
        assert inbound.http_status == 400
        assert body(inbound)["error"]["code"] == -32020


def test_unsupported_version_is_a_400_inbound_naming_the_supported_ones(stateless_server):
    text = DISCOVER.replace('"2026-07-28"', '"2027-01-01"')
    with StreamableHTTPTransport("stateless", f"{stateless_server}/mcp") as transport:
        transport.open(10)
        transport.send(text, headers={"MCP-Protocol-Version": "2027-01-01", "Mcp-Method": "server/discover"},
                       timeout=10)
        inbound = transport.receive(10)
        # MCP 2026-07-28 basic/versioning: unsupported version -> 400 + -32022 with data.supported
        assert inbound.http_status == 400
        error = body(inbound)["error"]
        assert error["code"] == -32022
        assert "2026-07-28" in error["data"]["supported"]


# -- failures ------------------------------------------------------------------------------------


def test_unreachable_port_is_a_connect_error_naming_url_and_advice(unused_port):
    url = f"http://127.0.0.1:{unused_port}/mcp"
    transport = StreamableHTTPTransport("nowhere", url)
    with pytest.raises(ConnectError) as caught:
        transport.open(5)
    message = str(caught.value)
    assert message.startswith("nowhere: ") and url in message
    assert "is the server running? check host/port" in message
    assert "\n" not in message
    transport.close()


def test_first_send_reports_an_unreachable_server_too(unused_port):
    url = f"http://127.0.0.1:{unused_port}/mcp"
    transport = StreamableHTTPTransport("gone", url)
    transport._start_client(5)  # open() without its probe: the first POST must say the same
    with pytest.raises(ConnectError, match="is the server running") as caught:
        transport.send(INITIALIZE, timeout=5)
    assert isinstance(caught.value.__cause__, httpx2.ConnectError)  # raised from the httpx2 error
    transport.close()


@pytest.mark.parametrize("json_mode", [True, False], ids=["json-body", "sse-event"])
def test_an_answer_over_the_cap_raises_and_the_transport_goes_on(json_mode, stateful_json_server,
                                                                stateful_sse_server):
    base = stateful_json_server if json_mode else stateful_sse_server
    with StreamableHTTPTransport("capped", f"{base}/mcp", max_message_bytes=20_000) as transport:
        transport.open(10)
        handshake(transport)
        transport.send(call(3, "bulky_text", {"size": 200_000}), headers=V2025, timeout=10)
        with pytest.raises(ResponseTooLarge) as caught:
            transport.receive(10)
        # issue 2 item 5: a clear error naming the cap and the option, instead of exhausting memory
        assert "20000-byte cap" in str(caught.value) and "--max-message-bytes" in str(caught.value)
        with pytest.raises(RequestTimeout, match="no answer is pending"):
            transport.receive(1)  # the rest was discarded, not queued
        transport.send(call(4, "repeat_word", {"word": "still"}), headers=V2025, timeout=10)
        assert body(transport.receive(10))["result"]["content"][0]["text"] == "still"


# -- bearer tokens (MCP 2025-11-25 basic/authorization; tokens only in the Authorization header) ---------


def test_bearer_variable_missing_is_a_usage_error(bearer_server, monkeypatch):
    monkeypatch.delenv("FEELER_TEST_TOKEN", raising=False)
    transport = StreamableHTTPTransport("guarded", f"{bearer_server}/mcp", bearer_env="FEELER_TEST_TOKEN")
    with pytest.raises(UsageError, match="FEELER_TEST_TOKEN"):
        transport.open(5)
    transport.close()


def test_no_bearer_configured_gets_advice_on_401(bearer_server):
    with StreamableHTTPTransport("guarded", f"{bearer_server}/mcp") as transport:
        transport.open(10)
        # MCP 2025-11-25 basic/authorization: a request without a valid token gets 401
        with pytest.raises(ConnectError, match="wants a bearer token.*--bearer-env"):
            transport.send(INITIALIZE, timeout=10)


def test_a_refused_token_is_named_by_its_variable_never_by_its_value(bearer_server, monkeypatch):
    monkeypatch.setenv("FEELER_TEST_TOKEN", "not-the-right-token")
    with StreamableHTTPTransport("guarded", f"{bearer_server}/mcp", bearer_env="FEELER_TEST_TOKEN") as transport:
        transport.open(10)
        with pytest.raises(ConnectError, match=r"token in \$FEELER_TEST_TOKEN was refused") as caught:
            transport.send(INITIALIZE, timeout=10)
        assert "not-the-right-token" not in str(caught.value)
        assert "not-the-right-token" not in transport.diagnostics()


def test_the_right_token_opens_the_server(bearer_server, bearer_token, monkeypatch):
    monkeypatch.setenv("FEELER_TEST_TOKEN", bearer_token)
    transport = StreamableHTTPTransport("guarded", f"{bearer_server}/mcp", bearer_env="FEELER_TEST_TOKEN",
                                        headers={"X-Team": "transport-tests"})
    transport.open(10)
    handshake(transport)
    transport.send(TOOLS_LIST, headers=V2025, timeout=10)
    assert body(transport.receive(10))["id"] == 2
    assert bearer_token not in transport.diagnostics()
    transport.close()
