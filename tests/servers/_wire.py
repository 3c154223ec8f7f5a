"""A minimal dual-era MCP server over newline-delimited JSON-RPC on stdio, for misbehaving test servers.

Written by hand (no SDK) so each script can break exactly one rule. :class:`WireServer` answers
``initialize`` (echoes a handshake version it knows, else counter-offers 2025-11-25: MCP 2025-11-25
basic/lifecycle, "Version Negotiation"), ignores ``notifications/initialized``, answers
``server/discover`` when it speaks 2026-07-28 (MCP 2026-07-28 server/discover), ``ping``, ``tools/list``
and ``tools/call`` with one ``echo`` tool, and -32601 for anything else (JSON-RPC 2.0 section 5.1).
Scripts subclass it and override the ``on_*`` hooks.
"""

from __future__ import annotations

import json
import os
import select
import sys
import time
from typing import Any

HANDSHAKE_VERSIONS = ("2024-11-05", "2025-03-26", "2025-06-18", "2025-11-25")
MODERN_VERSIONS = ("2026-07-28",)
LATEST_HANDSHAKE = "2025-11-25"
META_VERSION = "io.modelcontextprotocol/protocolVersion"
META_CAPABILITIES = "io.modelcontextprotocol/clientCapabilities"

PARSE_ERROR, INVALID_REQUEST, METHOD_NOT_FOUND, INVALID_PARAMS = -32700, -32600, -32601, -32602
UNSUPPORTED_PROTOCOL_VERSION = -32022

ECHO_TOOL = {
    "name": "echo",
    "description": "Return the text it is given.",
    "inputSchema": {
        "type": "object",
        "properties": {"text": {"type": "string", "maxLength": 1000, "description": "The text to return."}},
        "required": ["text"],
        "additionalProperties": False,
    },
}


class RpcError(Exception):
    """Raised by a hook to answer the request with a JSON-RPC error."""

    def __init__(self, code: int, message: str, data: Any = None) -> None:
        super().__init__(message)
        self.code, self.message, self.data = code, message, data


class NoAnswer(Exception):
    """Raised by a hook that deliberately leaves the request unanswered."""


class WireServer:
    """The loop: one JSON-RPC message per line in, one per line out (MCP basic/transports, stdio)."""

    name = "wire-test-server"
    speaks_handshake = True
    speaks_modern = True

    def __init__(self) -> None:
        self._in = sys.stdin.buffer
        self._out = sys.stdout.buffer
        self._pending = b""
        self.client_capabilities: dict[str, Any] = {}
        self.tools: list[dict[str, Any]] = [ECHO_TOOL]

    # -- wire -----------------------------------------------------------------------------------

    def send(self, message: dict[str, Any]) -> None:
        self.write_raw(json.dumps(message, separators=(",", ":")).encode("utf-8") + b"\n")

    def write_raw(self, data: bytes) -> None:
        self._out.write(data)
        self._out.flush()

    def log(self, text: str) -> None:
        print(f"[{self.name}] {text}", file=sys.stderr, flush=True)

    def read_message(self, timeout: float | None = None) -> dict[str, Any] | None:
        """Read one line; ``None`` at end of input or when ``timeout`` seconds pass without a full line.

        Unparsable lines are answered with -32700 (JSON-RPC 2.0 section 5.1) and skipped.
        """
        deadline = None if timeout is None else time.monotonic() + timeout
        fd = self._in.fileno()
        while True:
            if b"\n" in self._pending:
                line, self._pending = self._pending.split(b"\n", 1)
                if not line.strip():
                    continue
                try:
                    message = json.loads(line)
                except ValueError:
                    self.send({"jsonrpc": "2.0", "id": None, "error": {"code": PARSE_ERROR, "message": "Parse error"}})
                    continue
                if not isinstance(message, dict):
                    self.send({"jsonrpc": "2.0", "id": None, "error": {"code": INVALID_REQUEST, "message": "Invalid Request"}})
                    continue
                return message
            wait = None if deadline is None else max(0.0, deadline - time.monotonic())
            ready, _, _ = select.select([fd], [], [], wait)
            if not ready:
                return None
            chunk = os.read(fd, 65536)
            if not chunk:
                return None
            self._pending += chunk

    def answer(self, request_id: Any, result: dict[str, Any]) -> None:
        self.send({"jsonrpc": "2.0", "id": request_id, "result": result})

    def fail(self, request_id: Any, code: int, message: str, data: Any = None) -> None:
        error: dict[str, Any] = {"code": code, "message": message}
        if data is not None:
            error["data"] = data
        self.send({"jsonrpc": "2.0", "id": request_id, "error": error})

    # -- loop -----------------------------------------------------------------------------------

    def run(self) -> None:
        """Serve until standard input ends."""
        while True:
            message = self.read_message()
            if message is None:
                return
            self.handle(message)

    def handle(self, message: dict[str, Any]) -> None:
        method = message.get("method")
        if not isinstance(method, str):
            return  # a response to a request of ours; hooks that wait for one read it themselves
        params = message.get("params") if isinstance(message.get("params"), dict) else {}
        if "id" not in message:
            self.on_notification(method, params)
            return
        request_id = message["id"]
        try:
            result = self.dispatch(method, params, request_id)
        except NoAnswer:
            return
        except RpcError as exc:
            self.fail(request_id, exc.code, exc.message, exc.data)
            return
        self.answer(request_id, result)

    def dispatch(self, method: str, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if method == "initialize":
            return self.on_initialize(params)
        if method == "server/discover":
            if not self.speaks_modern:
                raise RpcError(METHOD_NOT_FOUND, "Method not found: server/discover")
        modern = self.is_modern(params)
        if modern:
            self.check_modern_meta(params)
        elif not self.speaks_handshake:
            raise RpcError(INVALID_PARAMS, f"missing _meta[{META_VERSION!r}] and _meta[{META_CAPABILITIES!r}]")
        handlers = {
            "server/discover": lambda: self.on_discover(params),
            "ping": lambda: self.on_ping(params),
            "tools/list": lambda: self.on_tools_list(params),
            "tools/call": lambda: self.on_tools_call(params, request_id),
        }
        if method == "ping" and modern:
            handlers.pop("ping")  # ping is gone at 2026-07-28 (MCP 2026-07-28 changelog)
        if method not in handlers:
            raise RpcError(METHOD_NOT_FOUND, f"Method not found: {method}")
        result = handlers[method]()
        if modern:
            result = {"resultType": "complete", **result}
        return result

    # -- eras -----------------------------------------------------------------------------------

    def is_modern(self, params: dict[str, Any]) -> bool:
        meta = params.get("_meta")
        return self.speaks_modern and isinstance(meta, dict) and META_VERSION in meta

    def check_modern_meta(self, params: dict[str, Any]) -> None:
        meta = params.get("_meta") or {}
        requested = meta.get(META_VERSION)
        if requested not in MODERN_VERSIONS:
            # MCP 2026-07-28 basic/versioning: -32022 with data {supported, requested}.
            raise RpcError(
                UNSUPPORTED_PROTOCOL_VERSION,
                "Unsupported protocol version",
                {"supported": list(self.supported_versions()), "requested": requested},
            )
        if not isinstance(meta.get(META_CAPABILITIES), dict):
            raise RpcError(INVALID_PARAMS, f"missing _meta[{META_CAPABILITIES!r}]")
        self.client_capabilities = meta[META_CAPABILITIES]

    def supported_versions(self) -> tuple[str, ...]:
        return (MODERN_VERSIONS if self.speaks_modern else ()) + (HANDSHAKE_VERSIONS if self.speaks_handshake else ())

    def capabilities(self) -> dict[str, Any]:
        return {"tools": {"listChanged": False}}

    # -- hooks ----------------------------------------------------------------------------------

    def on_notification(self, method: str, params: dict[str, Any]) -> None:
        """Notifications (``notifications/initialized``, ``notifications/cancelled``) need no answer."""

    def on_initialize(self, params: dict[str, Any]) -> dict[str, Any]:
        requested = params.get("protocolVersion")
        if not self.speaks_handshake:
            # MCP 2026-07-28 basic/versioning: modern-only servers SHOULD name their versions.
            raise RpcError(
                UNSUPPORTED_PROTOCOL_VERSION,
                "Unsupported protocol version: this server speaks only 2026-07-28 (no initialize)",
                {"supported": list(self.supported_versions()), "requested": requested},
            )
        version = requested if requested in HANDSHAKE_VERSIONS else LATEST_HANDSHAKE
        if isinstance(params.get("capabilities"), dict):
            self.client_capabilities = params["capabilities"]
        return {
            "protocolVersion": version,
            "capabilities": self.capabilities(),
            "serverInfo": {"name": self.name, "version": "0.0.1"},
        }

    def on_discover(self, params: dict[str, Any]) -> dict[str, Any]:
        return {
            "supportedVersions": list(self.supported_versions()),
            "capabilities": self.capabilities(),
            "ttlMs": 0,
            "cacheScope": "public",
            "_meta": {"io.modelcontextprotocol/serverInfo": {"name": self.name, "version": "0.0.1"}},
        }

    def on_ping(self, params: dict[str, Any]) -> dict[str, Any]:
        return {}

    def on_tools_list(self, params: dict[str, Any]) -> dict[str, Any]:
        result: dict[str, Any] = {"tools": self.tools}
        if self.is_modern(params):
            result.update(ttlMs=0, cacheScope="public")
        return result

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        return self.call_echo(params)

    def call_echo(self, params: dict[str, Any]) -> dict[str, Any]:
        if params.get("name") != "echo":
            raise RpcError(INVALID_PARAMS, f"Unknown tool: {params.get('name')!r}")
        arguments = params.get("arguments") or {}
        text = arguments.get("text") if isinstance(arguments, dict) else None
        if not isinstance(text, str) or len(text) > 1000 or set(arguments) != {"text"}:
            return {"content": [{"type": "text", "text": "echo takes one argument, text (a string of at most 1000 characters)"}], "isError": True}
        return {"content": [{"type": "text", "text": text}]}


def text_result(text: str, *, error: bool = False) -> dict[str, Any]:
    """A tools/call result with one text block, ``isError: true`` when *error* (MCP 2025-11-25 server/tools)."""
    result: dict[str, Any] = {"content": [{"type": "text", "text": text}]}
    if error:
        result["isError"] = True
    return result


def main(server_class: type[WireServer]) -> None:
    """Run a server class until stdin ends; exit quietly on a closed stdout."""
    try:
        server_class().run()
    except BrokenPipeError:
        # The client went away: nothing left to say.
        sys.stderr.close()
        os._exit(0)
