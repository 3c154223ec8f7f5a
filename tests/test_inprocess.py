"""In-process targets (``module:attribute`` naming an official-SDK server object): parsing, loading errors,
and a session that behaves as over stdio.

Outside references: MCP 2025-11-25 server/tools (tools/list, tools/call results), MCP 2026-07-28
server/discover, JSON-RPC 2.0 section 5 (ids echoed).
"""

from __future__ import annotations

import pytest

from feeler.connect import connected, open_session
from feeler.errors import UsageError
from feeler.target import Target

INPROCESS = "feeler.demo.server:server"


def test_module_attribute_is_an_inprocess_target() -> None:
    target = Target.parse(INPROCESS)
    assert (target.kind, target.module, target.name) == ("inprocess", INPROCESS, INPROCESS)
    assert target.to_json() == {"kind": "inprocess", "module": INPROCESS}
    assert Target.from_json(target.to_json()) == target


@pytest.mark.parametrize("spec", ["my-mod:app", "pkg:", ":app", "pkg:1x", "a..b:c"])
def test_a_malformed_module_attribute_is_one_line(spec: str) -> None:
    with pytest.raises(UsageError) as caught:
        Target.parse(spec)
    text = str(caught.value)
    assert "\n" not in text and repr(spec) in text and "module:attribute" in text and "--" in text


@pytest.mark.parametrize(
    "spec, fragment",
    [
        ("feeler_no_such_module_81:app", "cannot import module 'feeler_no_such_module_81'"),
        ("feeler.demo.server:no_such_server", "has no attribute 'no_such_server'"),
        ("json:dumps", "not a server of the official mcp SDK"),
    ],
)
def test_loading_errors_name_the_target(spec: str, fragment: str) -> None:
    with pytest.raises(UsageError) as caught:
        open_session(spec, timeout=5)
    text = str(caught.value)
    assert "\n" not in text and spec in text and fragment in text


def test_an_inprocess_session_works_in_both_eras() -> None:
    with connected(INPROCESS, timeout=10) as session:
        assert session.era == "stateless"  # MCP 2026-07-28 server/discover answered
        ex = session.call_tool("list_berths", {"zone": "north"})
        assert ex.result["resultType"] == "complete" and not ex.is_error_result
        assert session.transport.alive()
    assert not session.transport.alive()
    with connected(INPROCESS, timeout=10, revision="2025-11-25") as session:
        assert (session.era, session.server_info["name"]) == ("handshake", session.server_info["name"])
        ex = session.call_tool("list_berths", {"zone": "north"})
        # MCP 2025-11-25 server/tools: a result has content; no resultType before 2026
        assert "content" in ex.result and "resultType" not in ex.result
        # MCP 2025-11-25 server/tools: an unknown tool is an error (protocol error or isError result)
        bad = session.call_tool("no_such_tool", {})
        assert bad.error is not None or bad.is_error_result


def test_close_twice_is_harmless() -> None:
    session = open_session(INPROCESS, timeout=10)
    session.close()
    session.close()
