"""The session against real servers: every misbehaving test server reported in one clear line within its
timeout, server-to-client traffic, message recording, raw sends, id echo and pagination.

Outside references: JSON-RPC 2.0 sections 4, 5 and 5.1 (ids echoed exactly, -32700 / -32600 / -32601),
MCP 2025-11-25 basic/lifecycle (initialize, timeouts), MCP 2025-11-25 basic/utilities/ping (answer {}),
MCP 2025-11-25 client/roots (-32601 without the roots capability), MCP 2025-11-25 basic/utilities/progress
and server/utilities/logging (notifications), MCP 2025-11-25 server/tools (pagination with nextCursor),
MCP 2026-07-28 basic/index (the per-request _meta envelope), basic/versioning (-32022) and
basic/transports (era detection), RFC 6750 section 3 (bearer challenge).
"""

from __future__ import annotations

import json
import os
import sys
import textwrap
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest

from feeler.connect import capture, connected, open_session
from feeler.errors import (
    ConnectError,
    FeelerError,
    HandshakeError,
    RemoteProtocolError,
    RequestTimeout,
    ResponseTooLarge,
    ServerExited,
    TargetError,
    UsageError,
)
from feeler.session import same_id
from feeler.target import Target

META = "io.modelcontextprotocol/"
INPROCESS = "feeler.demo.server:server"


def one_clear_line(exc: BaseException, target: Target | str) -> str:
    """The message is one line and names the target (issue 2 acceptance)."""
    text = str(exc)
    name = target.name if isinstance(target, Target) else target
    assert "\n" not in text, text
    assert name in text, text
    return text


# -- misbehaving servers -----------------------------------------------------------------------------
def test_crashes_on_call(server_target: Callable[..., Target]) -> None:
    target = server_target("crashes_on_call")
    with connected(target, timeout=5) as session:
        assert session.request("tools/list", {}).result["tools"]  # alive until a tool is called
        with pytest.raises(ServerExited) as caught:
            session.call_tool("echo", {"text": "boom"})
    text = one_clear_line(caught.value, target)
    assert caught.value.returncode == 3 and "exit code 3" in text
    assert "fatal:" in caught.value.stderr_tail and "fatal:" in text  # the stderr tail is shown
    assert "tools/call 'echo'" in text


def test_hangs_on_call(server_target: Callable[..., Target]) -> None:
    target = server_target("hangs_on_call")
    with connected(target, timeout=5) as session:
        started = time.monotonic()
        with pytest.raises(RequestTimeout) as caught:
            session.call_tool("echo", {"text": "x"}, timeout=0.5)
        assert time.monotonic() - started < 3  # within its timeout (plus scheduling slack)
        text = one_clear_line(caught.value, target)
        assert "tools/call 'echo'" in text and "0.5s" in text
        # the session survives a timed-out call: the server still answers other requests
        assert session.request("tools/list", {}).result["tools"][0]["name"] == "echo"
        # MCP 2025-11-25 basic/utilities/cancellation: the abandoned request was cancelled
        sent = [json.loads(f.text) for f in session.log if f.direction == "out"]
        assert any(m.get("method") == "notifications/cancelled" for m in sent)


def test_garbage_stdout_is_recorded_not_fatal(server_target: Callable[..., Target]) -> None:
    with connected(server_target("garbage_stdout"), timeout=5) as session:
        ex = session.call_tool("echo", {"text": "still works"})
        assert ex.result["content"][0]["text"] == "still works"
        # stdout lines that are not JSON-RPC are protocol violations, not crashes (issue 2, session)
        assert ex.violations and {v.kind for v in ex.violations} == {"not-json"}
        assert all(v.kind == "not-json" for v in session.log.violations)
        assert any(f.text == v.text for v in ex.violations for f in ex.frames)


UNREADABLE = [  # (answer line, what the one-line error says); each is valid JSON (RFC 8259) feeler cannot read
    pytest.param(b'{"jsonrpc":"2.0","id":$ID,"result":' + b"[" * 2000 + b"]" * 2000 + b"}\n",
                 "nests too deeply to be parsed", id="2000-levels"),
    pytest.param(b'{"jsonrpc":"2.0","id":$ID,"error":{"code":-1,"message":"m","data":' + b"[" * 600 + b"]" * 600 + b"}}\n",
                 "nests more than 512 levels deep", id="600-levels-in-an-error"),
    pytest.param(b'{"jsonrpc":"2.0","id":$ID,"result":{"content":[],"n":' + b"9" * 5000 + b"}}\n",
                 "holds a number feeler cannot convert", id="5000-digit-integer"),
]


@pytest.mark.parametrize(("line", "says"), UNREADABLE)
def test_an_unreadable_answer_ends_the_call_at_once(server_target: Callable[..., Target], line: bytes, says: str) -> None:
    """Not a traceback (RecursionError, Python's int digit limit) and not a wait for the timeout: the call
    ends at once with the exchange kept for the envelope check, and the session goes on."""
    import base64

    target = server_target("says_what_it_is_told")
    with connected(target, timeout=30) as session:
        with pytest.raises(RemoteProtocolError) as caught:  # not RequestTimeout: no wait for the 30 s
            session.call_tool("say", {"b64": base64.b64encode(line).decode()})
        assert says in one_clear_line(caught.value, target)
        assert [v.kind for v in caught.value.exchange.violations] == ["unreadable"]
        assert session.call_tool("echo", {"text": "after"}).result["content"][0]["text"] == "after"


def test_a_line_that_is_not_utf8_is_a_violation_and_the_answer_still_counts(server_target: Callable[..., Target]) -> None:
    """MCP basic/transports "stdio": messages are UTF-8 (RFC 8259 section 8.1); feeler reads on with U+FFFD."""
    with connected(server_target("invalid_utf8"), timeout=5) as session:
        ex = session.call_tool("bad", {"text": "x"})
        assert [v.kind for v in ex.violations] == ["not-utf8"] and "\ufffd" in ex.violations[0].text
        assert isinstance(ex.result, dict)


def test_a_banner_before_the_handshake_goes_with_the_first_call(server_target: Callable[..., Target]) -> None:
    """MCP basic/transports "stdio": the server MUST NOT write anything to stdout that is not an MCP message;
    no check looks at the handshake, so the first tools/call carries the violation (once)."""
    with connected(server_target("banner_line"), timeout=5) as session:
        first = session.call_tool("echo", {"text": "a"})
        second = session.call_tool("echo", {"text": "b"})
    assert [(v.kind, v.text) for v in first.violations] == [("not-json", "banner_line server 1.0 starting, press Ctrl-C to quit")]
    assert "while connecting" in first.violations[0].message and second.violations == []


@pytest.mark.parametrize("request_id, wrong", [(None, "1002"), ("call-a", "'call-a-other'")])
def test_wrong_id_names_both_ids(server_target: Callable[..., Target], request_id: Any, wrong: str) -> None:
    target = server_target("wrong_id")
    with connected(target, timeout=3) as session:
        with pytest.raises(RemoteProtocolError) as caught:
            session.request("tools/call", {"name": "echo", "arguments": {"text": "x"}}, request_id=request_id)
    text = one_clear_line(caught.value, target)
    # JSON-RPC 2.0 section 5: the response id must be the same as the request's
    sent = "(id 2)" if request_id is None else "(id 'call-a')"
    assert sent in text and wrong in text


def test_never_initializes_fails_within_probe_plus_request_timeout(server_target: Callable[..., Target]) -> None:
    target = server_target("never_initializes")
    started = time.monotonic()
    with pytest.raises(HandshakeError) as caught:
        open_session(target, probe_timeout=0.5, timeout=1)
    assert time.monotonic() - started < 0.5 + 1 + 2.5  # probe + initialize timeout + shutdown slack
    text = one_clear_line(caught.value, target)
    assert "initialize" in text and "--timeout" in text


def test_exits_at_start(server_target: Callable[..., Target]) -> None:
    target = server_target("exits_at_start")
    with pytest.raises((ServerExited, ConnectError)) as caught:
        open_session(target, timeout=5)
    text = one_clear_line(caught.value, target)
    assert "exit code 2" in text and "harbour.toml not found" in text


def test_huge_answer_is_cut_off_and_the_session_goes_on(server_target: Callable[..., Target]) -> None:
    target = server_target("huge_answer", env={"FEELER_HUGE_MIB": "3"})
    with connected(target, timeout=10, max_message_bytes=1 << 20) as session:
        with pytest.raises(ResponseTooLarge) as caught:
            session.call_tool("echo", {"text": "x"})
        text = one_clear_line(caught.value, target)
        assert "1,048,576 bytes" in text and "--max-message-bytes" in text
        # the rest of the oversized line is discarded; the next request is answered normally
        assert session.request("tools/list", {}).result["tools"][0]["name"] == "echo"


def test_slow_start_works_with_default_timeouts(server_target: Callable[..., Target]) -> None:
    with connected(server_target("slow_start", env={"FEELER_SLOW_START_S": "1"})) as session:
        assert session.era == "stateless"
        assert session.call_tool("echo", {"text": "late"}).result["content"][0]["text"] == "late"


def test_server_requests_are_answered_and_recorded(server_target: Callable[..., Target]) -> None:
    with connected(server_target("server_requests"), timeout=15) as session:
        assert session.era == "handshake"  # this server speaks only the handshake era
        ex = session.call_tool("echo", {"text": "x"})
    # the server itself judged our answers: ping -> {} (MCP 2025-11-25 basic/utilities/ping),
    # roots/list -> -32601 because we declared no roots capability (MCP 2025-11-25 client/roots)
    assert ex.result["structuredContent"] == {"as_expected": True, "answers": {"ping": "ok", "roots/list": "ok"}}
    assert [r["method"] for r in ex.server_requests] == ["ping", "roots/list"]
    answers = {m["id"]: m for m in (json.loads(f.text) for f in ex.frames if f.direction == "out") if "method" not in m}
    assert answers["srv-ping"]["result"] == {}
    assert answers["srv-roots"]["error"]["code"] == -32601  # JSON-RPC 2.0 section 5.1
    # notifications stay with the request they arrived during
    assert [n["method"] for n in ex.notifications] == ["notifications/progress", "notifications/message"]


def test_modern_only(server_target: Callable[..., Target]) -> None:
    target = server_target("modern_only")
    with connected(target, timeout=3) as session:
        assert (session.era, session.revision) == ("stateless", "2026-07-28")
        assert session.call_tool("echo", {"text": "m"}).result["resultType"] == "complete"
    with pytest.raises(HandshakeError) as caught:
        open_session(target, timeout=3, revision="2025-11-25")
    text = one_clear_line(caught.value, target)
    # MCP 2026-07-28 basic/versioning: the refusal names the versions the server supports
    assert "-32022" in text and "2026-07-28" in text and "2025-11-25" in text


def test_legacy_only(server_target: Callable[..., Target]) -> None:
    target = server_target("legacy_only")
    with connected(target, timeout=3) as session:
        # MCP 2026-07-28 basic/transports: -32601 to server/discover -> fall back to initialize
        assert (session.era, session.revision) == ("handshake", "2025-11-25")
        out = [json.loads(f.text) for f in session.log if f.direction == "out"]
        assert [m.get("method") for m in out[:3]] == ["server/discover", "initialize", "notifications/initialized"]
    with pytest.raises(HandshakeError) as caught:
        open_session(target, timeout=3, revision="2026-07-28")
    assert "-32601" in one_clear_line(caught.value, target)


class TestBearerHttp:
    """bearer_http over Streamable HTTP: the token comes only from a named environment variable."""

    TOKEN = "t0k-feeler-suite-5c1e"  # a test value, not a secret

    @pytest.fixture(scope="class")
    @classmethod
    def url(cls, suite: Any) -> Any:
        with suite.http_server([suite.python, str(suite.servers / "bearer_http.py"), "--port", "0"],
                               env={"FEELER_TEST_TOKEN": cls.TOKEN}) as url:
            yield url

    def test_without_a_token_the_error_mentions_bearer(self, url: str) -> None:
        with pytest.raises(TargetError) as caught:
            open_session(url, timeout=5)
        text = one_clear_line(caught.value, url)
        assert "bearer" in text.lower() and "--bearer-env" in text

    def test_with_the_variable_set_it_works(self, url: str, monkeypatch: pytest.MonkeyPatch) -> None:
        monkeypatch.setenv("SUITE_BEARER", self.TOKEN)
        target = Target.parse(url, bearer_env="SUITE_BEARER")
        with connected(target, timeout=5) as session:
            assert [t["name"] for t in capture(session).tools] == ["echo"]
        assert self.TOKEN not in json.dumps(target.to_json())
        assert target.to_json()["bearerEnv"] == "SUITE_BEARER"

    def test_a_wrong_token_is_refused_without_showing_it(self, url: str, monkeypatch: pytest.MonkeyPatch) -> None:
        monkeypatch.setenv("SUITE_BEARER", "wrong-value-9d2")
        with pytest.raises(FeelerError) as caught:
            open_session(Target.parse(url, bearer_env="SUITE_BEARER"), timeout=5)
        text = one_clear_line(caught.value, url)
        assert "wrong-value-9d2" not in text and self.TOKEN not in text and "SUITE_BEARER" in text

    def test_an_unset_variable_is_a_usage_error(self, url: str, monkeypatch: pytest.MonkeyPatch) -> None:
        monkeypatch.delenv("SUITE_BEARER", raising=False)
        with pytest.raises(UsageError) as caught:
            open_session(Target.parse(url, bearer_env="SUITE_BEARER"), timeout=5)
        assert "SUITE_BEARER" in one_clear_line(caught.value, url)


# -- recording, raw sends, ids -----------------------------------------------------------------------
def test_every_message_is_recorded_with_increasing_times(server_target: Callable[..., Target]) -> None:
    with connected(server_target("legacy_only"), timeout=3) as session:
        ex = session.call_tool("echo", {"text": "r"})
        session.notify("notifications/cancelled", {"requestId": 99})
    frames = list(session.log)
    directions = [f.direction for f in frames]
    # discover + answer, initialize + answer, initialized, call + answer, cancelled
    assert directions == ["out", "in", "out", "in", "out", "out", "in", "out"]
    stamps = [f.at for f in frames]
    assert stamps == sorted(stamps)
    assert all(abs(f.wall - time.time()) < 60 for f in frames)
    assert [f.direction for f in ex.frames] == ["out", "in"] and ex.frames[0].text == ex.request_text
    assert json.loads(ex.frames[1].text) == ex.response
    assert ex.finished is not None and ex.duration >= 0


def test_send_raw_any_json_value_and_a_non_json_line(server_target: Callable[..., Target]) -> None:
    with connected(server_target("legacy_only"), timeout=3) as session:
        # JSON-RPC 2.0 section 5.1: -32700 Parse error, id null
        ex = session.send_raw("this is {not json")
        assert ex.request_text == "this is {not json" and ex.request is None
        assert ex.response == {"jsonrpc": "2.0", "id": None, "error": {"code": -32700, "message": "Parse error"}}
        assert ex.frames[0].text == "this is {not json"
        # JSON-RPC 2.0 section 5.1: -32600 Invalid Request for a value that is not a request object
        # (a str payload is sent as raw text; other values are JSON-encoded)
        for value in (42, None, True, [1, 2]):
            ex = session.send_raw(value)
            assert ex.response["error"]["code"] == -32600 and ex.response["id"] is None
        # JSON-RPC 2.0 section 5.1: -32601 for an unknown method, id echoed
        ex = session.send_raw({"jsonrpc": "2.0", "id": "raw-1", "method": "no/such"})
        assert ex.response["error"]["code"] == -32601 and ex.response["id"] == "raw-1"
        # a notification needs no answer (JSON-RPC 2.0 section 4.1): listen for a grace period only
        ex = session.send_raw({"jsonrpc": "2.0", "method": "notifications/whatever"}, expect_answer=False, grace=0.2)
        assert ex.response is None


@pytest.mark.parametrize("request_id", ["abc", "7", 7, 0, -3, 2**40, ""])
def test_ids_are_echoed_exactly(request_id: Any) -> None:
    with connected(INPROCESS, timeout=5) as session:
        ex = session.request("tools/list", {}, request_id=request_id)
    # JSON-RPC 2.0 section 5: the response id is the same value *and type* as the request's
    assert ex.response["id"] == request_id and type(ex.response["id"]) is type(request_id)
    assert json.loads(ex.frames[-1].text)["id"] == request_id


def test_same_id_compares_type_as_well_as_value() -> None:
    # JSON-RPC 2.0 section 5: "1" and 1 are different ids
    assert same_id(1, 1) and same_id("1", "1")
    assert not same_id("1", 1) and not same_id(1, 1.0) and not same_id(True, 1)


def test_every_modern_request_carries_the_meta_envelope(server_target: Callable[..., Target]) -> None:
    with connected(server_target("modern_only"), timeout=3) as session:
        session.call_tool("echo", {"text": "m"})
        session.list_all("tools/list")
        requests = [json.loads(f.text) for f in session.log if f.direction == "out"]
    requests = [m for m in requests if "id" in m and "method" in m]
    assert [m["method"] for m in requests] == ["server/discover", "tools/call", "tools/list"]
    for message in requests:
        meta = message["params"]["_meta"]
        # MCP 2026-07-28 basic/index: protocolVersion and clientCapabilities are required in every request
        assert meta[META + "protocolVersion"] == "2026-07-28"
        assert isinstance(meta[META + "clientCapabilities"], dict)
        assert meta[META + "clientInfo"]["name"] == "feeler"  # SHOULD


def test_handshake_requests_carry_no_envelope(server_target: Callable[..., Target]) -> None:
    with connected(server_target("legacy_only"), timeout=3) as session:
        session.call_tool("echo", {"text": "h"})
        last = json.loads([f.text for f in session.log if f.direction == "out"][-1])
    # MCP 2025-11-25 basic/index: _meta is free-form there; feeler sends no 2026 envelope after initialize
    assert "_meta" not in last["params"]


def test_a_pinned_unknown_revision_is_a_usage_error() -> None:
    with pytest.raises(UsageError) as caught:
        open_session(INPROCESS, revision="2099-01-01")
    assert "\n" not in str(caught.value) and "2025-11-25" in str(caught.value)


# -- pagination: a tiny raw server (stdlib only, a real subprocess) -------------------------------------
PAGING_SERVER = textwrap.dedent(
    '''
    """Handshake-era server whose tools/list comes in pages; MODE=loop repeats its cursor forever."""
    import json, os, sys
    PAGES = [["t1", "t2"], ["t3"], ["t4", "t5"]]
    for line in sys.stdin:
        msg = json.loads(line)
        if "id" not in msg:
            continue
        method, params, out = msg["method"], msg.get("params") or {}, None
        if method == "server/discover":
            out = {"error": {"code": -32601, "message": "Method not found"}}
        elif method == "initialize":
            out = {"result": {"protocolVersion": params["protocolVersion"], "capabilities": {"tools": {}},
                              "serverInfo": {"name": "pages", "version": "1"}}}
        elif method == "tools/list":
            page = int(params.get("cursor") or "0")
            tools = [{"name": n, "inputSchema": {"type": "object"}} for n in PAGES[page % len(PAGES)]]
            result = {"tools": tools}
            if os.environ.get("MODE") == "loop":
                result["nextCursor"] = "1"
            elif page + 1 < len(PAGES):
                result["nextCursor"] = str(page + 1)
            out = {"result": result}
        else:
            out = {"error": {"code": -32601, "message": "Method not found"}}
        sys.stdout.write(json.dumps({"jsonrpc": "2.0", "id": msg["id"], **out}) + "\\n")
        sys.stdout.flush()
    '''
)


@pytest.fixture(scope="module")
def paging_server(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("paging") / "paging_server.py"
    path.write_text(PAGING_SERVER)
    return path


def test_list_all_follows_every_page(paging_server: Path) -> None:
    target = Target(kind="stdio", command=(sys.executable, str(paging_server)))
    with connected(target, timeout=3) as session:
        items, pages = session.list_all("tools/list")
        cat = capture(session)
    # MCP 2025-11-25 server/tools, pagination: follow nextCursor until it is absent
    assert [t["name"] for t in items] == ["t1", "t2", "t3", "t4", "t5"]
    assert [ex.request.get("params", {}).get("cursor") for ex in pages] == [None, "1", "2"]
    assert [t["name"] for t in cat.tools] == ["t1", "t2", "t3", "t4", "t5"]


def test_a_looping_cursor_is_reported(paging_server: Path) -> None:
    target = Target(kind="stdio", command=(sys.executable, str(paging_server)), env={"MODE": "loop"})
    with connected(target, timeout=3) as session:
        with pytest.raises(RemoteProtocolError) as caught:
            session.list_all("tools/list")
    text = one_clear_line(caught.value, target)
    assert "cursor" in text and "loops" in text


def test_the_suite_leaves_the_environment_token_to_children() -> None:
    # the leftover-process check (tests/test_no_leftover_processes.py) relies on this
    assert os.environ.get("FEELER_SUITE_TOKEN")
