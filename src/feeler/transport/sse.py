"""The legacy HTTP+SSE transport (MCP 2024-11-05 basic/transports; deprecated since 2025-03-26).

The client GETs an event stream and keeps it open for the whole connection. The server's first event,
``endpoint``, names the URI every client message is POSTed to; the server's messages arrive as
``message`` events on the stream (MCP 2024-11-05 basic/transports, "HTTP with SSE"). One daemon thread
reads the stream into a queue; ``receive()`` takes from it with a deadline.
"""

from __future__ import annotations

import threading
import time
from collections.abc import Mapping

import httpx2

from feeler.errors import ConnectError, TargetError
from feeler.transport._sse import SSEEvent, StreamEnded, StreamPump
from feeler.transport.base import DEFAULT_MAX_MESSAGE_BYTES, Inbound
from feeler.transport.http import HTTPTransportBase, _media_type, _merge, _one_line

__all__ = ["LegacySSETransport"]

#: how often open() looks whether the stream died while it waits for ``endpoint``
_WAIT_STEP = 0.05
_NOT_LEGACY_HINT = "is this a legacy HTTP+SSE server? For Streamable HTTP pass the URL without --sse"


def _origin(url: httpx2.URL) -> tuple[str, str, int | None]:
    default = {"http": 80, "https": 443}.get(url.scheme)
    return (url.scheme, url.host, url.port or default)


class LegacySSETransport(HTTPTransportBase):
    """The 2024-11-05 HTTP+SSE transport: one GET stream in, one POST per message out.

    :param target: display name of the target.
    :param url: the SSE URL, e.g. ``http://127.0.0.1:8000/sse``.
    :param headers: extra headers sent with every request.
    :param bearer_env: name of the environment variable holding a bearer token.
    :param max_message_bytes: cap on one SSE event or one error body.
    :param verify: verify TLS certificates.
    """

    kind = "sse"

    def __init__(
        self,
        target: str,
        url: str,
        *,
        headers: Mapping[str, str] | None = None,
        bearer_env: str | None = None,
        max_message_bytes: int = DEFAULT_MAX_MESSAGE_BYTES,
        verify: bool = True,
    ) -> None:
        super().__init__(target, url, headers=headers, bearer_env=bearer_env, max_message_bytes=max_message_bytes,
                         verify=verify)
        self._endpoint: str | None = None
        self._endpoint_problem: str | None = None  # set on the reader thread, read after _endpoint_seen
        self._endpoint_seen = threading.Event()
        self._stream: StreamPump | None = None
        self._stream_over: TargetError | None = None

    @property
    def endpoint(self) -> str | None:
        """The absolute URI messages are POSTed to, once the ``endpoint`` event arrived."""
        return self._endpoint

    def open(self, timeout: float) -> None:
        """GET the stream and wait up to *timeout* seconds for its ``endpoint`` event."""
        try:
            self._open(timeout)
        except BaseException:
            self.close()
            raise

    def _open(self, timeout: float) -> None:
        deadline = time.monotonic() + timeout
        client = self._start_client(timeout)
        headers = _merge({"Accept": "text/event-stream", "Cache-Control": "no-cache"}, self._common_headers())
        response = self._request(client, "GET", self.url, content=None, headers=headers, timeout=timeout)
        if response.status_code in (401, 403):
            self._refuse(response, self.url)
        media_type = _media_type(response)
        if response.status_code != 200 or media_type != "text/event-stream":
            response.close()
            raise ConnectError(
                f"GET {self.url} answered {response.status_code} {media_type or '(no content type)'}, not an event "
                f"stream: {_NOT_LEGACY_HINT}",
                target=self.target,
            )
        self._stream = self._start_stream(response, self._route_factory(response))
        while not self._endpoint_seen.is_set():  # bounded by the deadline
            remaining = deadline - time.monotonic()
            if remaining <= 0 or self._stream.finished.is_set():
                break
            self._endpoint_seen.wait(min(_WAIT_STEP, remaining))
        if self._endpoint_problem:
            raise ConnectError(self._endpoint_problem, target=self.target)
        if self._endpoint is None:
            ended = " (the server ended the stream)" if self._stream.finished.is_set() else ""
            raise ConnectError(f"no `endpoint` event within {timeout:g}s{ended}: {_NOT_LEGACY_HINT}", target=self.target)

    def _route_factory(self, response: httpx2.Response):  # -> Callable[[SSEEvent], Inbound | None]
        messages = self._message_route(response)
        stream_url = response.url

        def route(event: SSEEvent) -> Inbound | None:
            if event.event == "endpoint":
                if not self._endpoint_seen.is_set():
                    self._take_endpoint(stream_url, event.data)
                    self._endpoint_seen.set()
                return None  # a later endpoint event changes nothing
            return messages(event)

        return route

    def _take_endpoint(self, stream_url: httpx2.URL, data: str) -> None:
        """Resolve the endpoint against the SSE URL; refuse another origin (a server must not send us elsewhere)."""
        try:
            endpoint = stream_url.join(data.strip())
        except httpx2.InvalidURL as exc:
            self._endpoint_problem = f"the `endpoint` event holds {_one_line(data)!r}, not a URI ({_one_line(exc)})"
            return
        if _origin(endpoint) != _origin(stream_url):
            self._endpoint_problem = (
                f"the `endpoint` event names {endpoint}, on another origin than {self.url}; feeler only POSTs to "
                "the origin of the SSE URL"
            )
            return
        self._endpoint = str(endpoint)

    def send(self, text: str, *, headers: Mapping[str, str] | None = None, timeout: float = 30.0) -> None:
        if self._stream_over is not None:
            raise self._stream_over
        if self._client is None or self._endpoint is None:
            raise RuntimeError("open() must succeed before send()")
        merged = _merge({"Content-Type": "application/json"}, self._common_headers(), headers)
        body = text.encode("utf-8", errors="surrogatepass")
        response = self._request(self._client, "POST", self._endpoint, content=body, headers=merged, timeout=timeout)
        if response.status_code in (401, 403):
            self._refuse(response, self._endpoint)
        item = self._read_body(response, self._endpoint, timeout)
        # any 2xx: accepted, the answer comes on the stream (MCP 2024-11-05 leaves the status open)
        if isinstance(item, Inbound) and 200 <= response.status_code < 300:
            return
        self._ready.append(item)

    def _nothing_pending(self) -> TargetError:
        if self._stream_over is not None:
            return self._stream_over
        return super()._nothing_pending()

    def _stream_ended(self, ended: StreamEnded) -> None:
        """The one stream is the connection: once it ends no answer can arrive."""
        if ended.error is not None:
            self._stream_over = self._stream_error(ended.error)
        else:
            self._stream_over = ConnectError(
                f"the server ended the event stream at {self.url}; no more answers can arrive", target=self.target
            )
        raise self._stream_over

    def alive(self) -> bool:
        return self._stream_over is None and not self._closed
