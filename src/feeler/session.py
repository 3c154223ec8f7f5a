"""A JSON-RPC session with one MCP server, in either protocol era, recording every message.

The session owns all protocol knowledge: ids, the handshake (``initialize``) or the 2026-07-28
per-request ``_meta`` envelope, era detection, HTTP headers, and what to do with server-to-client
traffic. It sits on one :class:`~feeler.transport.base.Transport` and never knows which.

Every message sent and received is kept as a :class:`Frame` (direction, time, raw text) in the
session's :class:`MessageLog` and in the :class:`Exchange` it belongs to: the basis for call logs and
replay files. :meth:`Session.send_raw` sends any text, valid JSON-RPC or not, and returns what came back.
"""

from __future__ import annotations

import base64
import itertools
import json
import time
from collections import deque
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any

from feeler import __version__
from feeler._json import compact_dumps
from feeler.errors import (
    HandshakeError,
    RemoteProtocolError,
    RequestTimeout,
    TargetError,
    UsageError,
)
from feeler.revisions import (
    HANDSHAKE_REVISIONS,
    KNOWN_REVISIONS,
    LATEST_HANDSHAKE,
    LATEST_STATELESS,
    STATELESS_REVISIONS,
    era_of,
    newest,
)
from feeler.transport.base import Inbound, Transport

__all__ = ["Exchange", "Frame", "MessageLog", "Session", "Violation", "header_value", "same_id"]

CLIENT_INFO = {"name": "feeler", "version": __version__}
META_PREFIX = "io.modelcontextprotocol/"
#: Methods whose answer is a list that may come in pages: method -> result key.
LIST_METHODS = {
    "tools/list": "tools",
    "prompts/list": "prompts",
    "resources/list": "resources",
    "resources/templates/list": "resourceTemplates",
}
#: Cap on pages followed by :meth:`Session.list_all`, so a server that loops its cursor cannot hang us.
MAX_PAGES = 1000
#: Nesting of JSON containers in one message feeler will work with (common practice: real answers nest a
#: handful of levels; a catalog with a 100-level schema, which the schema limits then report per tool, about
#: 200). Below the parser's own limit (about the recursion limit, 1000, less the stack in use), so a deeper
#: message gets the same clear finding wherever feeler runs.
MAX_MESSAGE_DEPTH = 512


@dataclass(frozen=True, slots=True)
class Frame:
    """One message on the wire.

    :param direction: ``"out"`` (feeler to server) or ``"in"``.
    :param at: ``time.monotonic()``; :param wall: ``time.time()`` (for logs people read).
    """

    direction: str
    text: str
    at: float
    wall: float
    http_status: int | None = None

    def to_json(self) -> dict[str, Any]:
        out: dict[str, Any] = {"direction": self.direction, "time": self.wall, "text": self.text}
        if self.http_status is not None:
            out["httpStatus"] = self.http_status
        return out


@dataclass(frozen=True)
class Violation:
    """Something the server sent that breaks the protocol but did not end the session.

    :param kind: ``not-json``, ``not-jsonrpc``, ``not-utf8``, ``unreadable`` (JSON feeler cannot read: too
        deep, an integer past Python's digit limit), ``unknown-id``, ``late-answer``, ``server-request``
        (a request where the revision forbids them), ``http-status``.
    """

    kind: str
    message: str
    text: str = ""


class MessageLog:
    """Every frame of a session, newest last; bounded so a long campaign cannot exhaust memory."""

    def __init__(self, max_frames: int = 20_000) -> None:
        self.frames: deque[Frame] = deque(maxlen=max_frames)
        self.violations: list[Violation] = []
        #: 2026-07-28 ``InputRequiredResult`` answers (MCP 2026-07-28 basic/patterns/mrtr), newest last
        self.input_required: deque[Exchange] = deque(maxlen=1000)

    def add(self, frame: Frame) -> None:
        self.frames.append(frame)

    def __iter__(self) -> Iterator[Frame]:
        return iter(self.frames)

    def __len__(self) -> int:
        return len(self.frames)


@dataclass
class Exchange:
    """One request (or raw message) and everything that came back for it.

    :param response: the JSON-RPC answer (a dict; a list for a batch answer), None if none came.
    :param notifications: notifications received while waiting (progress, log messages...).
    :param server_requests: requests the server sent while waiting (answered by the session).
    """

    method: str | None
    request_id: Any
    request_text: str
    request: Any = None
    response: Any = None
    notifications: list[dict[str, Any]] = field(default_factory=list)
    server_requests: list[dict[str, Any]] = field(default_factory=list)
    violations: list[Violation] = field(default_factory=list)
    frames: list[Frame] = field(default_factory=list)
    started: float = field(default_factory=time.monotonic)
    finished: float | None = None
    http_status: int | None = None
    #: what the properties below read from ``response``, worked out once per response object (the checks
    #: ask for them dozens of times per call; a response is never changed in place)
    _read: tuple[Any, ...] | None = field(default=None, init=False, repr=False, compare=False)

    @property
    def duration(self) -> float:
        """Seconds from sending to the answer (or to now, if none came)."""
        return (self.finished or time.monotonic()) - self.started

    def _parts(self) -> tuple[Any, ...]:
        """(response, result, error, isError, input_required) for the current ``response``."""
        response = self.response
        read = self._read
        if read is not None and read[0] is response:
            return read
        result = err = None
        if isinstance(response, dict):
            result = response.get("result")
            err = response.get("error")
        final = isinstance(result, dict)
        read = self._read = (
            response,
            result,
            err if isinstance(err, dict) else None,
            final and result.get("isError") is True,
            final and result.get("resultType") == "input_required",
        )
        return read

    @property
    def result(self) -> Any:
        return self._parts()[1]

    @property
    def error(self) -> dict[str, Any] | None:
        return self._parts()[2]

    @property
    def is_error_result(self) -> bool:
        """A tool result with ``isError: true`` (a tool execution error, not a protocol error)."""
        return self._parts()[3]

    @property
    def input_required(self) -> bool:
        """A 2026-07-28 ``InputRequiredResult`` (MCP 2026-07-28 basic/patterns/mrtr)."""
        return self._parts()[4]


def _too_deep(text: str, value: Any) -> bool:
    """Does *value* (parsed from *text*) nest more than :data:`MAX_MESSAGE_DEPTH` containers? Iterative, and
    skipped when the text has too few brackets to get there."""
    if text.count("[") + text.count("{") <= MAX_MESSAGE_DEPTH:
        return False
    stack: list[tuple[Any, int]] = [(value, 1)] if isinstance(value, (dict, list)) else []
    while stack:  # bounded: each container is visited once
        node, depth = stack.pop()
        if depth > MAX_MESSAGE_DEPTH:
            return True
        children = node.values() if isinstance(node, dict) else node
        stack.extend((child, depth + 1) for child in children if isinstance(child, (dict, list)))
    return False


def same_id(a: Any, b: Any) -> bool:
    """JSON-RPC ids match only with the same type: ``"1"`` is not ``1`` (JSON-RPC 2.0 section 5)."""
    return type(a) is type(b) and a == b


def header_value(value: str) -> str:
    """Encode a value for an ``Mcp-Name`` / ``Mcp-Param-*`` header (MCP 2026-07-28 streamable-http).

    Values that are not plain visible ASCII, have edge whitespace, or look like the sentinel are sent as
    ``=?base64?<base64 of UTF-8>?=``.
    """
    plain = (
        value.isascii()
        and all(0x20 <= ord(c) < 0x7F for c in value)
        and value == value.strip()
        and not value.startswith("=?")
    )
    if plain:
        return value
    return "=?base64?" + base64.b64encode(value.encode("utf-8")).decode("ascii") + "?="


def _param_header(value: Any) -> str | None:
    if value is None:
        return None
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, str):
        return header_value(value)
    return None


class Session:
    """Talk to one server over *transport*.

    :param revision: pin one protocol revision; None detects the era (MCP 2026-07-28
        basic/transports, "backward compatibility") and negotiates the newest revision both sides speak.
    :param request_timeout: default seconds to wait for each answer.
    :param probe_timeout: seconds to wait for the ``server/discover`` probe before falling back to the
        handshake era (a handshake-era server may not answer an unknown method at all).
    """

    def __init__(
        self,
        transport: Transport,
        *,
        revision: str | None = None,
        request_timeout: float = 30.0,
        probe_timeout: float = 5.0,
        connect_timeout: float = 10.0,
        client_capabilities: Mapping[str, Any] | None = None,
        log: MessageLog | None = None,
    ) -> None:
        if revision is not None and revision not in KNOWN_REVISIONS:
            raise UsageError(f"revision={revision!r} is not a protocol revision feeler knows; pick one of {', '.join(KNOWN_REVISIONS)}")
        self.transport = transport
        self.pinned = revision
        self.request_timeout = request_timeout
        self.probe_timeout = probe_timeout
        self.connect_timeout = connect_timeout
        self.client_capabilities = dict(client_capabilities or {})
        self.log = log if log is not None else MessageLog()
        self._ids = itertools.count(1)
        self._abandoned: set[Any] = set()
        #: violations seen while connecting (a banner line before the handshake answer): no check looks at
        #: the handshake's exchanges, so they go with the next tools/call
        self._early: list[Violation] = []
        self._param_headers: dict[str, dict[str, str]] = {}
        self.revision: str | None = None
        self.era: str | None = None
        self.server_info: dict[str, Any] = {}
        self.capabilities: dict[str, Any] = {}
        self.instructions: str | None = None
        self.supported_revisions: list[str] = []
        self.opened = False

    # -- life cycle ------------------------------------------------------------------------------
    @property
    def target(self) -> str:
        return self.transport.target

    def open(self) -> Session:
        """Connect and agree on an era and revision. Raises a :class:`~feeler.errors.TargetError`."""
        self.transport.open(self.connect_timeout)
        try:
            self._negotiate()
        except BaseException:
            self.transport.close()
            raise
        self.opened = True
        return self

    def close(self) -> None:
        self.transport.close()
        self.opened = False

    def __enter__(self) -> Session:
        return self.open() if not self.opened else self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # -- envelope and headers ----------------------------------------------------------------------
    def meta(self, revision: str | None = None) -> dict[str, Any]:
        """The 2026-07-28 per-request ``_meta`` envelope (MCP 2026-07-28 basic/index)."""
        return {
            META_PREFIX + "protocolVersion": revision or self.revision or LATEST_STATELESS,
            META_PREFIX + "clientCapabilities": dict(self.client_capabilities),
            META_PREFIX + "clientInfo": dict(CLIENT_INFO),
        }

    def params(self, params: Mapping[str, Any] | None, *, revision: str | None = None) -> dict[str, Any] | None:
        """*params* as this session sends them: with the ``_meta`` envelope in the stateless era."""
        rev = revision or self.revision
        if rev is None or era_of(rev) != "stateless":
            return dict(params) if params is not None else None
        out = dict(params or {})
        meta = dict(out.get("_meta") or {})
        for key, value in self.meta(rev).items():
            meta.setdefault(key, value)
        out["_meta"] = meta
        return out

    def headers_for(self, message: Any, *, revision: str | None = None) -> dict[str, str]:
        """HTTP headers a message needs (MCP 2025-06-18 and 2026-07-28 basic/transports)."""
        rev = revision or self.revision
        if rev is None or not self.transport.takes_headers:
            return {}  # stdio and in-process have no headers: nothing to compute on their hot path
        headers = {"MCP-Protocol-Version": rev}
        if era_of(rev) != "stateless" or not isinstance(message, dict) or "method" not in message:
            return headers
        method = message.get("method")
        if isinstance(method, str):
            headers["Mcp-Method"] = header_value(method)
        params = message.get("params") if isinstance(message.get("params"), dict) else {}
        if method in ("tools/call", "prompts/get") and isinstance(params.get("name"), str):
            headers["Mcp-Name"] = header_value(params["name"])
        elif method == "resources/read" and isinstance(params.get("uri"), str):
            headers["Mcp-Name"] = header_value(params["uri"])
        if method == "tools/call":
            args = params.get("arguments") if isinstance(params.get("arguments"), dict) else {}
            for prop, token in self._param_headers.get(str(params.get("name")), {}).items():
                value = _param_header(args.get(prop))
                if value is not None:
                    headers["Mcp-Param-" + token] = value
        return headers

    def learn_tools(self, tools: list[dict[str, Any]]) -> None:
        """Remember which tool arguments travel in ``Mcp-Param-*`` headers (``x-mcp-header``)."""
        for tool in tools:
            schema = tool.get("inputSchema") if isinstance(tool, dict) else None
            props = schema.get("properties") if isinstance(schema, dict) else None
            if not isinstance(props, dict):
                continue
            tokens = {
                name: prop["x-mcp-header"]
                for name, prop in props.items()
                if isinstance(prop, dict) and isinstance(prop.get("x-mcp-header"), str)
            }
            if tokens:
                self._param_headers[str(tool.get("name"))] = tokens

    # -- sending ------------------------------------------------------------------------------------
    def next_id(self) -> int:
        return next(self._ids)

    def request(
        self,
        method: str,
        params: Mapping[str, Any] | None = None,
        *,
        timeout: float | None = None,
        request_id: Any = None,
        revision: str | None = None,
        raise_on_http: bool = True,
    ) -> Exchange:
        """Send a request and wait for its answer; the :class:`Exchange` holds everything that came back.

        A JSON-RPC error answer is *not* raised: it is in ``exchange.error``. Raised are only failures
        of the target (:class:`~feeler.errors.RequestTimeout`, :class:`~feeler.errors.ServerExited`...).
        """
        rid = self.next_id() if request_id is None else request_id
        message: dict[str, Any] = {"jsonrpc": "2.0", "id": rid, "method": method}
        sent_params = self.params(params, revision=revision)
        if sent_params is not None:
            message["params"] = sent_params
        ex = self._send(message, method=method, request_id=rid, revision=revision, timeout=timeout)
        if self._early and method == "tools/call":
            ex.violations.extend(self._early)
            self._early = []
        self._await(ex, timeout if timeout is not None else self.request_timeout, mode="id")
        if ex.response is None and raise_on_http:
            raise RemoteProtocolError(
                f"{method} (id {rid!r}): HTTP {ex.http_status} with no JSON-RPC answer", target=self.target
            )
        return ex

    def notify(self, method: str, params: Mapping[str, Any] | None = None) -> Exchange:
        """Send a notification (no answer is awaited)."""
        message: dict[str, Any] = {"jsonrpc": "2.0", "method": method}
        if params is not None:
            message["params"] = dict(params)
        ex = self._send(message, method=method, request_id=None)
        ex.finished = time.monotonic()
        return ex

    def send_raw(self, payload: Any, *, expect_answer: bool = True, timeout: float | None = None, grace: float = 0.5) -> Exchange:
        """Send any JSON value (or, if *payload* is a ``str``, that exact text) and return what came back.

        With *expect_answer*, waits for the first answer-shaped message (any id: checking the id is the
        caller's job). Without, listens for *grace* seconds and records anything that arrives.
        """
        text = payload if isinstance(payload, str) else json.dumps(payload, ensure_ascii=False)
        try:
            parsed = json.loads(text)
        except ValueError:
            parsed = None
        method = parsed.get("method") if isinstance(parsed, dict) else None
        rid = parsed.get("id") if isinstance(parsed, dict) else None
        ex = Exchange(method=method if isinstance(method, str) else None, request_id=rid, request_text=text, request=parsed)
        self._write(ex, text, self.headers_for(parsed), timeout)
        if expect_answer:
            self._await(ex, timeout if timeout is not None else self.request_timeout, mode="any")
        else:
            try:
                self._await(ex, grace, mode="any")
            except RequestTimeout:
                pass  # silence is the right answer to a notification
        return ex

    def _send(
        self, message: dict[str, Any], *, method: str, request_id: Any, revision: str | None = None, timeout: float | None = None
    ) -> Exchange:
        text = compact_dumps(message)
        ex = Exchange(method=method, request_id=request_id, request_text=text, request=message)
        self._write(ex, text, self.headers_for(message, revision=revision), timeout)
        return ex

    def _write(self, ex: Exchange, text: str, headers: Mapping[str, str], timeout: float | None) -> None:
        frame = Frame("out", text, time.monotonic(), time.time())
        self.log.add(frame)
        ex.frames.append(frame)
        ex.started = frame.at
        self.transport.send(text, headers=headers, timeout=timeout if timeout is not None else self.request_timeout)

    # -- receiving -------------------------------------------------------------------------------
    def _await(self, ex: Exchange, timeout: float, *, mode: str) -> None:
        """Read until the answer to *ex* arrives; handle everything else that comes first."""
        deadline = time.monotonic() + timeout
        while True:
            remaining = deadline - time.monotonic()
            if remaining <= 0:
                self._timed_out(ex, timeout)
            try:
                inbound = self.transport.receive(remaining)
            except RequestTimeout:
                self._timed_out(ex, timeout)
            except TargetError as exc:
                exc.args = (f"{self._what(ex)}: {exc.args[0]}",) + exc.args[1:]
                raise
            frame = Frame("in", inbound.text, inbound.at, time.time(), inbound.http_status)
            self.log.add(frame)
            ex.frames.append(frame)
            if inbound.http_status is not None:
                ex.http_status = inbound.http_status
            if self._handle(ex, inbound, mode):
                ex.finished = inbound.at
                if ex.input_required:
                    self.log.input_required.append(ex)
                return

    def _what(self, ex: Exchange) -> str:
        if ex.method == "tools/call" and isinstance(ex.request, dict):
            name = (ex.request.get("params") or {}).get("name") if isinstance(ex.request.get("params"), dict) else None
            return f"tools/call {name!r} (id {ex.request_id!r})"
        return f"{ex.method or 'raw message'} (id {ex.request_id!r})" if ex.request_id is not None else (ex.method or "raw message")

    def _timed_out(self, ex: Exchange, timeout: float) -> None:
        if ex.request_id is not None:
            if not isinstance(ex.request_id, (list, dict)):
                self._abandoned.add(ex.request_id)
            self._cancel(ex.request_id)
        hint = ""
        strays = [v for v in ex.violations if v.kind == "unknown-id"]
        if strays:
            hint = f"; it did answer with an id feeler never sent: {strays[0].message}"
        raise RequestTimeout(f"{self._what(ex)}: no answer within {timeout:g}s{hint}", target=self.target)

    def _cancel(self, request_id: Any) -> None:
        """Tell the server we gave up (MCP basic/utilities/cancellation); never on stateless HTTP."""
        if request_id is None or isinstance(request_id, (list, dict)):
            return
        if self.revision is not None and era_of(self.revision) == "stateless" and self.transport.kind == "http":
            return
        try:
            self.notify("notifications/cancelled", {"requestId": request_id, "reason": "feeler: timed out"})
        except TargetError:
            pass

    def _handle(self, ex: Exchange, inbound: Inbound, mode: str) -> bool:
        """Deal with one inbound message; True when it is the answer *ex* waits for."""
        if inbound.text == "":
            # An HTTP answer with a status and no body: nothing more will come for this request.
            return True
        if inbound.not_utf8:  # MCP basic/transports "stdio": UTF-8 only; the message is still read (U+FFFD)
            bad = max(0, inbound.text.find("\ufffd") - 40)  # the excerpt shows the first bad byte
            self._violate(ex, Violation("not-utf8", "a message that is not UTF-8 (bad bytes shown as U+FFFD)",
                                        inbound.text[bad : bad + 500]))
        try:
            msg = json.loads(inbound.text)
        except json.JSONDecodeError:
            self._violate(ex, Violation("not-json", "a message that is not JSON", inbound.text[:500]))
            return False
        except RecursionError:
            self._unreadable(ex, inbound, "it nests too deeply to be parsed")
        except ValueError as exc:  # valid JSON all the same: an integer past Python's digit limit (sys.int_info)
            self._unreadable(ex, inbound, f"it holds a number feeler cannot convert ({str(exc).split(';')[0]})")
        if _too_deep(inbound.text, msg):
            self._unreadable(ex, inbound, f"it nests more than {MAX_MESSAGE_DEPTH} levels deep")
        if isinstance(msg, list):
            if mode == "any":
                ex.response = msg
                return True
            self._violate(ex, Violation("not-jsonrpc", "a batch answer to a single request", inbound.text[:500]))
            return False
        if not isinstance(msg, dict):
            self._violate(ex, Violation("not-jsonrpc", "a JSON value that is not a JSON-RPC message", inbound.text[:500]))
            if mode == "any":
                ex.response = msg
                return True
            return False
        if "method" in msg:
            if "id" in msg:
                self._answer_server_request(ex, msg)
            else:
                ex.notifications.append(msg)
            return False
        if "result" in msg or "error" in msg or "id" in msg:
            got = msg.get("id")
            if mode == "any" or same_id(got, ex.request_id) or (got is None and "error" in msg):
                ex.response = msg
                return True
            if not isinstance(got, (list, dict)) and got in self._abandoned:
                self._violate(ex, Violation("late-answer", f"a late answer to request {got!r}", inbound.text[:500]))
                return False
            self._violate(ex, Violation("unknown-id", f"an answer with id {got!r} instead of {ex.request_id!r}", inbound.text[:500]))
            ex.response = msg  # kept so that checks can judge the envelope
            ex.finished = inbound.at
            error = RemoteProtocolError(
                f"{self._what(ex)}: the server answered with id {got!r}, which feeler never sent "
                f"(JSON-RPC 2.0 section 5: the id must echo the request's)",
                target=self.target,
            )
            error.exchange = ex
            raise error
        self._violate(ex, Violation("not-jsonrpc", "a JSON object that is neither request, notification nor answer", inbound.text[:500]))
        return False

    def _unreadable(self, ex: Exchange, inbound: Inbound, why: str) -> None:
        """End the exchange at once: a message feeler cannot read is most likely the answer it waits for (it
        would otherwise wait out the timeout). The envelope check reports it; a late real answer is a
        ``late-answer``."""
        self._violate(ex, Violation("unreadable", f"a message feeler cannot read: {why}", inbound.text[:500]))
        ex.finished = inbound.at
        if ex.request_id is not None and not isinstance(ex.request_id, (list, dict)):
            self._abandoned.add(ex.request_id)
        error = RemoteProtocolError(f"{self._what(ex)}: the server sent a message feeler cannot read: {why}", target=self.target)
        error.exchange = ex
        raise error

    def _violate(self, ex: Exchange, violation: Violation) -> None:
        ex.violations.append(violation)
        self.log.violations.append(violation)
        if not self.opened and violation.kind in ("not-json", "not-jsonrpc", "not-utf8"):
            self._early.append(Violation(violation.kind, violation.message + " while connecting", violation.text))

    def _answer_server_request(self, ex: Exchange, msg: dict[str, Any]) -> None:
        ex.server_requests.append(msg)
        if self.revision is not None and era_of(self.revision) == "stateless":
            self._violate(ex, Violation("server-request", f"a server-to-client request {msg.get('method')!r}, which 2026-07-28 forbids"))
        answer: dict[str, Any] = {"jsonrpc": "2.0", "id": msg.get("id")}
        if msg.get("method") == "ping":
            answer["result"] = {}
        else:
            answer["error"] = {"code": -32601, "message": f"feeler does not offer {msg.get('method')!r}"}
        text = json.dumps(answer, ensure_ascii=False, separators=(",", ":"))
        frame = Frame("out", text, time.monotonic(), time.time())
        self.log.add(frame)
        ex.frames.append(frame)
        self.transport.send(text, headers=self.headers_for(answer), timeout=self.request_timeout)

    # -- era detection and negotiation ---------------------------------------------------------------
    def _negotiate(self) -> None:
        if self.pinned is not None:
            if era_of(self.pinned) == "stateless":
                ex = self._discover(self.pinned, self.request_timeout)
                if not self._adopt_discover(ex, self.pinned):
                    raise HandshakeError(self._refusal("server/discover", ex, self.pinned), target=self.target)
            else:
                self._initialize(self.pinned, allow_stateless=False)
            return
        preferred = self._probe_stateless()
        if self.era is None:
            self._initialize(preferred or LATEST_HANDSHAKE, allow_stateless=True)

    def _discover(self, revision: str, timeout: float) -> Exchange:
        return self.request("server/discover", {}, timeout=timeout, revision=revision, raise_on_http=False)

    def _probe_stateless(self) -> str | None:
        """Try the stateless era (MCP 2026-07-28 basic/transports, backward compatibility).

        Adopts the stateless era and returns None on success; otherwise returns the handshake revision
        the server named, if any, for the ``initialize`` that follows.
        """
        revision = LATEST_STATELESS
        for _ in range(2):  # one re-probe when the server names another stateless revision
            try:
                ex = self._discover(revision, self.probe_timeout)
            except RequestTimeout:
                return None  # handshake-era servers may ignore unknown methods before initialize
            if self._adopt_discover(ex, revision):
                return None
            supported = self._supported_in(ex)
            stateless = newest([r for r in supported if r in STATELESS_REVISIONS])
            if stateless and stateless != revision:
                revision = stateless
                continue
            return newest([r for r in supported if r in HANDSHAKE_REVISIONS])
        return None

    @staticmethod
    def _supported_in(ex: Exchange) -> list[str]:
        result, error = ex.result, ex.error
        if isinstance(result, dict) and isinstance(result.get("supportedVersions"), list):
            return [v for v in result["supportedVersions"] if isinstance(v, str)]
        data = error.get("data") if error else None
        if isinstance(data, dict) and isinstance(data.get("supported"), list):
            return [v for v in data["supported"] if isinstance(v, str)]
        return []

    def _adopt_discover(self, ex: Exchange, revision: str) -> bool:
        result = ex.result
        if not isinstance(result, dict) or not isinstance(result.get("supportedVersions"), list):
            return False
        supported = [v for v in result["supportedVersions"] if isinstance(v, str)]
        if revision not in supported:
            return False
        self.era, self.revision = "stateless", revision
        self.supported_revisions = supported
        self.capabilities = dict(result.get("capabilities") or {})
        self.instructions = result.get("instructions")
        meta = result.get("_meta") if isinstance(result.get("_meta"), dict) else {}
        info = meta.get(META_PREFIX + "serverInfo")
        self.server_info = dict(info) if isinstance(info, dict) else {}
        self.transport.set_protocol_version(revision)
        return True

    def _initialize(self, revision: str, *, allow_stateless: bool) -> None:
        tried: set[str] = set()
        while True:
            tried.add(revision)
            params = {"protocolVersion": revision, "capabilities": dict(self.client_capabilities), "clientInfo": dict(CLIENT_INFO)}
            try:
                ex = self.request("initialize", params, timeout=self.request_timeout, revision=None, raise_on_http=False)
            except RequestTimeout as exc:
                raise HandshakeError(
                    f"no answer to initialize within {self.request_timeout:g}s"
                    + ("" if self.pinned else " (nor to server/discover)")
                    + ": is this an MCP server, and is it stuck starting? Raise --timeout if it starts slowly",
                    target=self.target,
                ) from exc
            result = ex.result
            if isinstance(result, dict) and isinstance(result.get("protocolVersion"), str):
                agreed = result["protocolVersion"]
                if agreed not in HANDSHAKE_REVISIONS:
                    raise HandshakeError(
                        f"the server answered initialize with protocolVersion {agreed!r}, which feeler does not speak "
                        f"in the handshake era (it speaks {', '.join(HANDSHAKE_REVISIONS)})",
                        target=self.target,
                    )
                if self.pinned and agreed != self.pinned:
                    raise HandshakeError(
                        f"revision {self.pinned} was pinned but the server counter-offered {agreed}", target=self.target
                    )
                self.era, self.revision = "handshake", agreed
                self.supported_revisions = [agreed]
                self.capabilities = dict(result.get("capabilities") or {})
                self.server_info = dict(result.get("serverInfo") or {})
                self.instructions = result.get("instructions")
                self.transport.set_protocol_version(agreed)
                self.notify("notifications/initialized")
                return
            supported = self._supported_in(ex)
            retry = newest([r for r in supported if r in HANDSHAKE_REVISIONS and r not in tried])
            if retry and not self.pinned:
                revision = retry
                continue
            stateless = newest([r for r in supported if r in STATELESS_REVISIONS])
            if stateless and allow_stateless:
                dex = self._discover(stateless, self.request_timeout)
                if self._adopt_discover(dex, stateless):
                    return
            error = HandshakeError(self._refusal("initialize", ex, revision), target=self.target)
            error.http_status = ex.http_status
            raise error

    @staticmethod
    def _refusal(method: str, ex: Exchange, revision: str) -> str:
        if ex.error:
            return (
                f"{method} at revision {revision} was refused: {ex.error.get('code')} {ex.error.get('message')!r}"
                + (f" (server supports {', '.join(Session._supported_in(ex))})" if Session._supported_in(ex) else "")
            )
        if ex.response is None:
            return f"{method} at revision {revision} got HTTP {ex.http_status} with no JSON-RPC answer"
        return f"{method} at revision {revision} got an answer feeler cannot use: {json.dumps(ex.response)[:300]}"

    # -- conveniences -----------------------------------------------------------------------------------
    def call_tool(self, name: str, arguments: Any = None, *, timeout: float | None = None, omit_arguments: bool = False) -> Exchange:
        """``tools/call`` with *arguments* sent exactly as given (any JSON value, for no-go cases)."""
        params: dict[str, Any] = {"name": name}
        if not omit_arguments:
            params["arguments"] = {} if arguments is None else arguments
        return self.request("tools/call", params, timeout=timeout)

    def list_all(self, method: str, *, timeout: float | None = None) -> tuple[list[Any], list[Exchange]]:
        """Every page of a list method; returns the items and the exchanges (one per page)."""
        key = LIST_METHODS[method]
        items: list[Any] = []
        exchanges: list[Exchange] = []
        cursor: Any = None
        seen: set[str] = set()
        for _ in range(MAX_PAGES):
            ex = self.request(method, {"cursor": cursor} if cursor is not None else {}, timeout=timeout)
            exchanges.append(ex)
            if ex.error:
                raise RemoteProtocolError(
                    f"{method} failed: {ex.error.get('code')} {ex.error.get('message')!r}", target=self.target
                )
            result = ex.result if isinstance(ex.result, dict) else {}
            page = result.get(key)
            if not isinstance(page, list):
                raise RemoteProtocolError(f"{method}: the result has no {key!r} list", target=self.target)
            items.extend(page)
            cursor = result.get("nextCursor")
            if cursor is None:
                return items, exchanges
            marker = json.dumps(cursor)
            if marker in seen:
                raise RemoteProtocolError(f"{method}: the server repeated cursor {cursor!r}; pagination loops", target=self.target)
            seen.add(marker)
        raise RemoteProtocolError(f"{method}: more than {MAX_PAGES} pages; giving up", target=self.target)

    def ping(self, *, timeout: float | None = None) -> Exchange:
        """Is the server still answering? ``ping`` in the handshake era, ``server/discover`` in 2026
        (which has no ping: MCP 2026-07-28 changelog)."""
        if self.era == "stateless":
            return self.request("server/discover", {}, timeout=timeout)
        return self.request("ping", None, timeout=timeout)
