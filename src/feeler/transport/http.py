"""Streamable HTTP (MCP 2025-03-26 … 2026-07-28) on httpx2, plus what both HTTP transports share.

Like every transport this one moves raw text: the session decides every MCP header
(``MCP-Protocol-Version``, ``Mcp-Method``, ``Mcp-Name``, ``Mcp-Param-*``) and passes it to ``send()``.
What this module adds on its own is HTTP plumbing: ``Content-Type``/``Accept``, the configured extra
headers, the bearer token, and echoing the ``Mcp-Session-Id`` the server issued
(MCP 2025-11-25 basic/transports, "Session Management").

Answers, by shape (MCP 2025-11-25 basic/transports, "Sending Messages to the Server"):

* 202/204 without a body (an accepted notification or response): nothing to receive;
* ``application/json`` (or any other non-SSE body, and every 4xx/5xx): one :class:`Inbound` with the body
  text, status and answer headers, so the session can read a JSON-RPC error or decide on era fallback;
* ``text/event-stream``: the stream stays open and a reader thread (:class:`~._sse.StreamPump`) hands
  its ``message`` events to ``receive()`` one by one, while the session may POST again (to answer a server
  request that arrived on the stream);
* 401 and 403 end the attempt with :class:`~feeler.errors.ConnectError`: no message can get through.

httpx2 exceptions never leave this module: they become :mod:`feeler.errors` exceptions, raised ``from``
the original (translate at the boundary).
"""

from __future__ import annotations

import contextlib
import os
import queue
import socket
import time
import urllib.request
from collections import deque
from collections.abc import Callable, Iterator, Mapping

import httpx2

from feeler.errors import (
    ConnectError,
    RemoteProtocolError,
    RequestTimeout,
    ResponseTooLarge,
    TargetError,
    UsageError,
)
from feeler.transport._sse import EventTooLarge, SSEEvent, StreamEnded, StreamPump
from feeler.transport.base import DEFAULT_MAX_MESSAGE_BYTES, Inbound, Transport

__all__ = ["HTTPTransportBase", "StreamableHTTPTransport", "redact_headers"]

#: the option users raise the size cap with (named in the error message)
CAP_OPTION = "--max-message-bytes"
#: the option that names the environment variable holding the bearer token
BEARER_OPTION = "--bearer-env"
#: how many stream events may wait unread before the reader threads pause (back-pressure)
_QUEUE_SIZE = 1024
#: how long close() gives the DELETE that ends a session
_CLOSE_TIMEOUT = 5.0
#: header names whose values never appear in diagnostics or errors
_SECRET_HEADERS = frozenset({"authorization", "proxy-authorization", "cookie"})
#: how much of a refusal body or challenge goes into an error message
_EXCERPT = 200


def redact_headers(headers: Mapping[str, str]) -> dict[str, str]:
    """A copy of *headers* safe to show: credentials replaced by ``<redacted>``."""
    return {name: ("<redacted>" if name.lower() in _SECRET_HEADERS else value) for name, value in headers.items()}


def _merge(*layers: Mapping[str, str] | None) -> dict[str, str]:
    """Merge header layers case-insensitively; later layers win (header names are case-insensitive, RFC 9110 5.1)."""
    merged: dict[str, tuple[str, str]] = {}
    for layer in layers:
        for name, value in (layer or {}).items():
            merged[name.lower()] = (name, value)
    return dict(merged.values())


def _one_line(text: object, limit: int = _EXCERPT) -> str:
    flat = " ".join(str(text).split())
    return flat if len(flat) <= limit else flat[: limit - 1] + "…"


def _media_type(response: httpx2.Response) -> str:
    return response.headers.get("content-type", "").partition(";")[0].strip().lower()


def _answer_headers(response: httpx2.Response) -> dict[str, str]:
    """Every answer header, lower-case names, repeated headers joined (RFC 9110 5.3); credentials redacted."""
    joined: dict[str, str] = {}
    for name, value in response.headers.multi_items():
        key = name.lower()
        joined[key] = f"{joined[key]}, {value}" if key in joined else value
    return redact_headers(joined)


class HTTPTransportBase(Transport):
    """What the Streamable HTTP and the legacy HTTP+SSE transports share.

    :param target: display name of the target (every error message starts with it).
    :param url: the MCP endpoint (Streamable HTTP) or the SSE URL (legacy).
    :param headers: extra headers sent with every request (e.g. an API gateway key).
    :param bearer_env: name of the environment variable holding a bearer token, read at ``open()``.
    :param max_message_bytes: cap on one JSON body or one SSE event.
    :param verify: verify TLS certificates (turn off only for a test server with a self-signed one).
    """

    takes_headers = True

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
        super().__init__(target, max_message_bytes=max_message_bytes)
        try:
            parsed = httpx2.URL(url)
        except httpx2.InvalidURL as exc:
            raise UsageError(f"{target}: {url!r} is not a valid URL ({exc}); give an http:// or https:// URL") from exc
        if parsed.scheme not in ("http", "https") or not parsed.host:
            raise UsageError(f"{target}: {url!r} is not an http:// or https:// URL with a host")
        self.url = url
        self._extra_headers = dict(headers or {})
        self._bearer_env = bearer_env
        self._token: str | None = None  # never logged, never put in a message
        self._verify = verify
        self._client: httpx2.Client | None = None
        self._closed = False
        self._protocol_version: str | None = None
        # answers ready for receive(), read on this thread: an Inbound, or the error receive() raises
        self._ready: deque[Inbound | TargetError] = deque()
        # what the reader threads produce: Inbound or StreamEnded
        self._events: queue.Queue[object] = queue.Queue(maxsize=_QUEUE_SIZE)
        self._pumps: set[StreamPump] = set()
        self._last: str = "no request yet"

    # -- life cycle -------------------------------------------------------------------------------

    def _start_client(self, timeout: float) -> httpx2.Client:
        if self._closed:
            raise RuntimeError("this transport was closed; make a new one")
        if self._client is None:
            self._token = self._read_token()
            # follow_redirects off: a tester reports a redirect, it does not silently follow it
            self._client = httpx2.Client(verify=self._verify, follow_redirects=False, timeout=timeout)
        return self._client

    def _read_token(self) -> str | None:
        if self._bearer_env is None:
            return None
        token = os.environ.get(self._bearer_env, "").strip()
        if not token:
            raise UsageError(
                f"{self.target}: the environment variable {self._bearer_env} (named by {BEARER_OPTION}) is not set "
                f"or empty: export {self._bearer_env}=<token> before running"
            )
        if any(ch in token for ch in "\r\n\0"):
            raise UsageError(
                f"{self.target}: the token in ${self._bearer_env} contains a line break or NUL; "
                "it cannot go into an HTTP header"
            )
        return token

    def close(self) -> None:
        """Stop the reader threads, end the session if the kind has one, close the client. Never raises."""
        if self._closed:
            return
        self._closed = True
        for pump in list(self._pumps):
            pump.stop()
        self._pumps.clear()
        client, self._client = self._client, None
        if client is None:
            return
        with contextlib.suppress(Exception):  # errors while closing must not hide the real outcome
            self._end_session(client)
        with contextlib.suppress(Exception):
            client.close()

    def _end_session(self, client: httpx2.Client) -> None:
        """Hook: say goodbye to the server before the client closes."""

    def set_protocol_version(self, version: str | None) -> None:
        self._protocol_version = version

    # -- requests ---------------------------------------------------------------------------------

    def _common_headers(self) -> dict[str, str]:
        bearer = {"Authorization": f"Bearer {self._token}"} if self._token else None
        return _merge(self._extra_headers, bearer)

    def _request(
        self, client: httpx2.Client, method: str, url: str, *, content: bytes | None,
        headers: Mapping[str, str], timeout: float,
    ) -> httpx2.Response:
        """Send one request and return the streaming response (headers read, body not yet)."""
        # Our own timeout dict: httpcore reads "read" again when the body starts, so a stream can be
        # switched to "wait as long as it takes" after its headers arrived (see _start_stream).
        timeouts: dict[str, float | None] = {"connect": timeout, "read": timeout, "write": timeout, "pool": timeout}
        self._last = f"{method} {url}: no answer"
        with self._translate(method, url, timeout):
            request = client.build_request(method, url, content=content, headers=dict(headers),
                                           extensions={"timeout": timeouts})
            response = client.send(request, stream=True)
        self._last = f"{method} {url} -> {response.status_code} {_media_type(response) or '(no content type)'}"
        return response

    @contextlib.contextmanager
    def _translate(self, method: str, url: str, timeout: float) -> Iterator[None]:
        """Turn httpx2 exceptions into feeler's, raised ``from`` the original."""
        try:
            yield
        except httpx2.ConnectTimeout as exc:
            raise ConnectError(
                f"no connection to {url} within {timeout:g}s: is the server running? check host/port",
                target=self.target,
            ) from exc
        except httpx2.TimeoutException as exc:
            raise RequestTimeout(f"{method} {url}: no answer within {timeout:g}s", target=self.target) from exc
        except httpx2.ConnectError as exc:
            raise ConnectError(
                f"cannot reach {url} ({_one_line(exc)}): is the server running? check host/port",
                target=self.target,
            ) from exc
        except httpx2.RemoteProtocolError as exc:
            raise RemoteProtocolError(
                f"{method} {url}: the server broke off the HTTP exchange ({_one_line(exc)})", target=self.target
            ) from exc
        except (httpx2.UnsupportedProtocol, httpx2.InvalidURL) as exc:
            raise UsageError(f"{self.target}: cannot send to {url!r}: {_one_line(exc)}") from exc
        except httpx2.TransportError as exc:  # read/write errors, proxy errors
            raise ConnectError(f"{method} {url} failed: {_one_line(exc)}", target=self.target) from exc

    def _refuse(self, response: httpx2.Response, url: str) -> None:
        """401/403: nothing will get through, so stop with advice instead of handing the body on."""
        status = response.status_code
        challenge = _one_line(response.headers.get("www-authenticate", ""))
        response.close()
        told = f" (server challenge: {challenge})" if challenge else ""
        if status == 401 and self._token is None:
            text = (f"the server wants a bearer token (401 from {url}){told}: set {BEARER_OPTION} VAR naming an "
                    "environment variable that holds it")
        elif status == 401:
            text = f"the token in ${self._bearer_env} was refused (401 from {url}){told}: check it is valid for this server"
        else:
            text = (f"forbidden (403 from {url}){told}: the server refused this client - a token without the "
                    "needed scope, or an Origin/Host it does not accept")
        raise ConnectError(text, target=self.target)

    def _read_body(self, response: httpx2.Response, url: str, timeout: float) -> Inbound | TargetError:
        """Read a whole (non-SSE) body up to the cap; over the cap, stop reading and return the error."""
        cap = self.max_message_bytes
        try:
            declared = response.headers.get("content-length", "")
            if declared.isdigit() and int(declared) > cap:
                return self._too_large(url, int(declared), "declared in Content-Length")
            body = bytearray()
            with self._translate("reading the answer of", url, timeout):
                for chunk in response.iter_bytes():
                    body += chunk
                    if len(body) > cap:
                        return self._too_large(url, len(body), "read before stopping")
        except TargetError as exc:
            return exc
        finally:
            response.close()  # unread rest is dropped with the connection
        encoding = response.charset_encoding or "utf-8"
        try:
            text = body.decode(encoding, errors="replace")
        except LookupError:  # a charset Python does not know: JSON is UTF-8 anyway (RFC 8259 8.1)
            text = body.decode("utf-8", errors="replace")
        return Inbound(text=text, http_status=response.status_code, headers=_answer_headers(response))

    def _too_large(self, url: str, size: int, how: str) -> ResponseTooLarge:
        return ResponseTooLarge(
            f"an answer from {url} exceeds the {self.max_message_bytes}-byte cap ({size} bytes {how}); "
            f"it was discarded - raise the cap with {CAP_OPTION} if the server is right to send that much",
            target=self.target,
        )

    def _start_stream(self, response: httpx2.Response, route: Callable[[SSEEvent], object | None]) -> StreamPump:
        """Hand an SSE response to a reader thread; its body may now stay silent as long as it likes."""
        # receive(timeout) bounds each wait; a socket read timeout would instead kill a slow tool's stream
        response.request.extensions["timeout"]["read"] = None
        pump = StreamPump(response, max_event_bytes=self.max_message_bytes, route=route, out=self._events,
                          name=f"feeler-sse {self.target}")
        self._pumps.add(pump)
        pump.start()
        return pump

    def _message_route(self, response: httpx2.Response) -> Callable[[SSEEvent], Inbound | None]:
        """Events that carry JSON-RPC: type ``message`` with data (priming events have none)."""
        status, headers = response.status_code, _answer_headers(response)

        def route(event: SSEEvent) -> Inbound | None:
            if event.event != "message" or not event.data:
                return None
            return Inbound(text=event.data, http_status=status, headers=headers)

        return route

    # -- receiving --------------------------------------------------------------------------------

    def receive(self, timeout: float) -> Inbound:
        if self._ready:
            return self._deliver(self._ready.popleft())
        deadline = time.monotonic() + timeout
        while True:  # bounded: every turn either returns, raises, or consumes a StreamEnded
            if self._events.empty() and not self._pumps:
                raise self._nothing_pending()
            remaining = deadline - time.monotonic()
            try:
                item = self._events.get(timeout=max(remaining, 0.0)) if remaining > 0 else self._events.get_nowait()
            except queue.Empty:
                raise RequestTimeout(f"no answer from {self.url} within {timeout:g}s", target=self.target) from None
            if isinstance(item, StreamEnded):
                self._pumps.discard(item.pump)
                self._stream_ended(item)
                continue
            assert isinstance(item, Inbound)
            return item

    def _deliver(self, item: Inbound | TargetError) -> Inbound:
        if isinstance(item, TargetError):
            raise item
        return item

    def _nothing_pending(self) -> TargetError:
        return RequestTimeout(
            f"no answer is pending from {self.url} (no queued answer and no open stream)", target=self.target
        )

    def _stream_ended(self, ended: StreamEnded) -> None:
        """A stream is over; raise if it ended badly."""
        if ended.error is not None:
            raise self._stream_error(ended.error) from ended.error

    def _stream_error(self, error: BaseException) -> TargetError:
        url = str(getattr(getattr(error, "request", None), "url", "") or self.url)
        if isinstance(error, EventTooLarge):
            return self._too_large(url, error.size, "in one SSE event, read before stopping")
        try:
            # stream reads have no timeout of their own (see _start_stream), so the 0 never shows
            with self._translate("reading the event stream of", url, 0):
                raise error
        except TargetError as translated:
            return translated
        except BaseException:  # noqa: BLE001 - not an httpx2 error: still a broken stream
            return RemoteProtocolError(f"the event stream from {url} broke off: {_one_line(error)}",
                                       target=self.target)

    def diagnostics(self) -> str:
        parts = [f"{self.kind} {self.url}", f"last: {self._last}", f"open streams: {len(self._pumps)}"]
        if self._extra_headers:
            parts.append(f"extra headers: {redact_headers(self._extra_headers)}")
        parts.append(f"bearer: from ${self._bearer_env}" if self._bearer_env else "bearer: none")
        return "; ".join(parts)


class StreamableHTTPTransport(HTTPTransportBase):
    """The Streamable HTTP transport (MCP 2025-03-26 … 2026-07-28): every message is one POST.

    :param target: display name of the target.
    :param url: the MCP endpoint, e.g. ``http://127.0.0.1:8000/mcp``.
    :param headers: extra headers sent with every request.
    :param bearer_env: name of the environment variable holding a bearer token.
    :param max_message_bytes: cap on one JSON body or one SSE event.
    :param verify: verify TLS certificates.
    """

    kind = "http"

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
        self._session_id: str | None = None
        self._session_note = ""

    @property
    def session_id(self) -> str | None:
        """The ``Mcp-Session-Id`` the server issued (None before, in stateless servers and 2026-07-28)."""
        return self._session_id

    def open(self, timeout: float) -> None:
        """Create the client and check that something listens at the URL (no HTTP request is sent)."""
        self._start_client(timeout)
        self._probe(timeout)

    def _probe(self, timeout: float) -> None:
        """A TCP connect to the URL's host and port, so a wrong address fails at once, not at the first send."""
        url = httpx2.URL(self.url)
        host = url.host
        port = url.port or (443 if url.scheme == "https" else 80)
        proxies = urllib.request.getproxies_environment()
        if (proxies.get(url.scheme) or proxies.get("all")) and not urllib.request.proxy_bypass_environment(host):
            return  # through a proxy the server's own address may be unreachable from here, and that is fine
        try:
            with socket.create_connection((host, port), timeout=timeout):
                pass
        except OSError as exc:
            raise ConnectError(
                f"cannot reach {self.url} ({_one_line(exc)}): is the server running? check host/port",
                target=self.target,
            ) from exc

    def send(self, text: str, *, headers: Mapping[str, str] | None = None, timeout: float = 30.0) -> None:
        client = self._start_client(timeout)
        session = {"Mcp-Session-Id": self._session_id} if self._session_id else None
        merged = _merge(
            # Accept MUST list both answer types (MCP 2025-11-25 basic/transports, "Sending Messages")
            {"Content-Type": "application/json", "Accept": "application/json, text/event-stream"},
            self._common_headers(),
            session,
            headers,  # the session's own headers win, so it can send deliberately odd ones
        )
        body = text.encode("utf-8", errors="surrogatepass")  # a tester may send malformed text on purpose
        response = self._request(client, "POST", self.url, content=body, headers=merged, timeout=timeout)
        self._capture_session(response, sent=merged)
        if response.status_code in (401, 403):
            self._refuse(response, self.url)
        if _media_type(response) == "text/event-stream":
            self._start_stream(response, self._message_route(response))
            return
        item = self._read_body(response, self.url, timeout)
        if isinstance(item, Inbound) and item.text == "" and item.http_status in (202, 204):
            return  # an accepted notification or response: nothing comes back
        self._ready.append(item)

    def _capture_session(self, response: httpx2.Response, *, sent: Mapping[str, str]) -> None:
        issued = response.headers.get("mcp-session-id")
        if issued:
            self._session_id = issued
            self._session_note = "issued"
        elif response.status_code == 404 and self._session_id and any(
            name.lower() == "mcp-session-id" and value == self._session_id for name, value in sent.items()
        ):
            # 404 to a request carrying our session id: the session is over and the next message must be a
            # fresh initialize without the id (MCP 2025-11-25 basic/transports, "Session Management" item 4)
            self._session_id = None
            self._session_note = "ended by the server (404)"

    def _end_session(self, client: httpx2.Client) -> None:
        """DELETE the session, if one was issued (MCP 2025-11-25 basic/transports, "Session Management" item 5).

        Any status is accepted quietly: 405 means the server does not let clients end sessions.
        """
        if not self._session_id:
            return
        headers = _merge(
            self._common_headers(),
            {"Mcp-Session-Id": self._session_id},
            {"MCP-Protocol-Version": self._protocol_version} if self._protocol_version else None,
        )
        response = self._request(client, "DELETE", self.url, content=None, headers=headers, timeout=_CLOSE_TIMEOUT)
        response.close()
        self._session_id = None
        self._session_note = f"ended by DELETE ({response.status_code})"

    def diagnostics(self) -> str:
        base = super().diagnostics()
        if self._session_id:
            session = "session id: issued"
        else:
            session = f"session id: {self._session_note or 'none'}"
        version = f"protocol version: {self._protocol_version}" if self._protocol_version else ""
        return "; ".join(part for part in (base, session, version) if part)
