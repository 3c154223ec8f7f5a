"""The SSE event parser, and LegacySSETransport against real servers on 127.0.0.1.

Parser checks cite the WHATWG HTML standard, section 9.2.6 "Interpreting an event stream" (the SSE
wire format both MCP HTTP transports use). Transport checks cite MCP 2024-11-05 basic/transports,
"HTTP with SSE".
"""

from __future__ import annotations

import json

import pytest

from feeler.errors import ConnectError, RequestTimeout, ResponseTooLarge
from feeler.transport._sse import EventTooLarge, SSEEvent, SSEParser
from feeler.transport.sse import LegacySSETransport

INITIALIZE = (
    '{"jsonrpc":"2.0","id":1,"method":"initialize","params":{"protocolVersion":"2024-11-05",'
    '"capabilities":{},"clientInfo":{"name":"transport-tests","version":"0.0.1"}}}'
)
INITIALIZED = '{"jsonrpc":"2.0","method":"notifications/initialized"}'


def parse(*chunks: bytes, cap: int = 1000) -> list[SSEEvent]:
    parser = SSEParser(cap)
    events = [event for chunk in chunks for event in parser.feed(chunk)]
    return events + list(parser.finish())


# -- parser ----------------------------------------------------------------------------------------


@pytest.mark.parametrize("newline", [b"\n", b"\r\n", b"\r"], ids=["LF", "CRLF", "CR"])
def test_every_line_ending_ends_a_line(newline):
    # WHATWG HTML 9.2.6: lines end in CRLF, LF or CR
    stream = b"event: message" + newline + b"data: one" + newline + newline
    assert parse(stream) == [SSEEvent(event="message", data="one")]


def test_a_crlf_split_across_chunks_is_one_line_ending():
    # WHATWG HTML 9.2.6: CRLF is one line ending even when the chunk boundary falls between CR and LF
    assert parse(b"data: a\r", b"\n\r", b"\ndata: b\r\n\r\n") == [SSEEvent(data="a"), SSEEvent(data="b")]


def test_data_lines_join_with_lf_and_one_leading_space_is_dropped():
    # WHATWG HTML 9.2.6: a single space after the colon is removed; data lines are joined with LF
    assert parse(b"data:  x\ndata:y\n\n") == [SSEEvent(data=" x\ny")]


def test_comments_and_events_without_data_are_not_dispatched():
    # WHATWG HTML 9.2.6: ':' starts a comment; an event whose data buffer is empty is not dispatched
    assert parse(b": keep-alive\n\nevent: endpoint\n\nid: 7\n\n") == []


def test_a_priming_event_has_an_id_and_empty_data():
    # MCP 2025-11-25 basic/transports: priming event = event id + empty data field
    assert parse(b"id: p1\ndata:\n\n") == [SSEEvent(data="", id="p1")]


def test_id_and_retry_fields_are_kept():
    # WHATWG HTML 9.2.6: "id" sets the last event id (kept for later events), "retry" takes digits only
    assert parse(b"id: 5\nretry: 300\ndata: a\n\nretry: soon\ndata: b\n\n") == [
        SSEEvent(data="a", id="5", retry=300), SSEEvent(data="b", id="5", retry=None),
    ]


def test_an_unfinished_event_at_the_end_is_dropped_and_a_bom_ignored():
    # WHATWG HTML 9.2.6: a leading U+FEFF is skipped; an event without its blank line is discarded at EOF
    assert parse(b"\xef\xbb", b"\xbfdata: a\n\ndata: b\n") == [SSEEvent(data="a")]


def test_utf8_split_across_chunks_decodes():
    text = "é—✓".encode()
    assert parse(b"data: " + text[:1], text[1:4], text[4:] + b"\n\n") == [SSEEvent(data="é—✓")]


def test_an_event_over_the_cap_stops_the_parser_after_earlier_events():
    parser = SSEParser(50)
    seen = []
    with pytest.raises(EventTooLarge) as caught:
        for event in parser.feed(b"data: small\n\ndata: " + b"z" * 100 + b"\n\n"):
            seen.append(event)
    assert seen == [SSEEvent(data="small")]  # what came before the big event still arrives
    assert caught.value.cap == 50 and caught.value.size > 50


def test_a_line_that_never_ends_is_capped_too():
    parser = SSEParser(50)
    assert list(parser.feed(b"data: " + b"z" * 40)) == []
    with pytest.raises(EventTooLarge):
        list(parser.feed(b"z" * 40))  # no newline yet, but memory must stay bounded


# -- legacy transport --------------------------------------------------------------------------------


def test_endpoint_then_messages(legacy_sse_server):
    transport = LegacySSETransport("legacy", f"{legacy_sse_server}/sse")
    transport.open(10)
    try:
        # MCP 2024-11-05 basic/transports, "HTTP with SSE": the first event is `endpoint`, a URI for POSTs
        assert transport.endpoint is not None
        assert transport.endpoint.startswith(f"{legacy_sse_server}/messages/")
        transport.send(INITIALIZE, timeout=10)
        inbound = transport.receive(10)
        answer = json.loads(inbound.text)
        # JSON-RPC 2.0 section 5: the response echoes the id; it arrived as a `message` event on the stream
        assert answer["id"] == 1 and answer["result"]["protocolVersion"] == "2024-11-05"
        assert inbound.headers["content-type"].startswith("text/event-stream")
        transport.send(INITIALIZED, timeout=10)
        transport.send('{"jsonrpc":"2.0","id":2,"method":"tools/call","params":{"name":"repeat_word",'
                       '"arguments":{"word":"hi","times":2}}}', timeout=10)
        # MCP 2024-11-05 server/tools, "Calling Tools"
        assert json.loads(transport.receive(10).text)["result"]["content"][0]["text"] == "hi hi"
        with pytest.raises(RequestTimeout, match="within 0.2s"):
            transport.receive(0.2)  # the stream stays open: a quiet server is a timeout, not an end
        stream = transport._stream
    finally:
        transport.close()
    assert stream is not None and stream.finished.is_set()  # close() ended the reader thread
    transport.close()  # idempotent


def test_a_post_the_server_rejects_is_queued_with_its_status(legacy_sse_server):
    with LegacySSETransport("legacy", f"{legacy_sse_server}/sse") as transport:
        transport.open(10)
        transport.send("this is not json", timeout=10)
        inbound = transport.receive(10)
        # common practice (MCP 2024-11-05 leaves the POST status open): the SDK answers unparsable bodies 400
        assert inbound.http_status == 400


def test_a_streamable_http_url_is_refused_with_a_hint(stateless_server):
    transport = LegacySSETransport("not-legacy", f"{stateless_server}/mcp")
    # the SDK answers this GET with an event stream of its own, without `endpoint`
    with pytest.raises(ConnectError, match="pass the URL without --sse"):
        transport.open(1)


def test_no_endpoint_event_in_time(odd_sse_server):
    transport = LegacySSETransport("quiet", f"{odd_sse_server}/sse-quiet")
    with pytest.raises(ConnectError, match=r"no `endpoint` event within 0.5s.*without --sse"):
        transport.open(0.5)
    assert not transport.alive()


def test_an_endpoint_on_another_origin_is_refused(odd_sse_server):
    transport = LegacySSETransport("elsewhere", f"{odd_sse_server}/sse-elsewhere")
    # SDK behaviour (mcp client/sse.py) and a safety rule of ours: POST only to the SSE URL's origin
    with pytest.raises(ConnectError, match="another origin"):
        transport.open(5)


def test_an_event_over_the_cap_ends_the_stream_with_a_clear_error(odd_sse_server):
    transport = LegacySSETransport("bulky", f"{odd_sse_server}/sse-bulky", max_message_bytes=10_000)
    transport.open(5)
    try:
        with pytest.raises(ResponseTooLarge, match="10000-byte cap"):
            transport.receive(5)
        assert not transport.alive()
        with pytest.raises(ResponseTooLarge):  # the one stream is the connection: it stays over
            transport.send(INITIALIZED, timeout=5)
    finally:
        transport.close()
