"""Streamable HTTP (JSON answers) guarded by bearer tokens, written as a bare ASGI app; each --fault breaks
one authorization rule.

Tokens come from the environment: FEELER_MAIN_TOKEN (sees every tool) and FEELER_LOW_TOKEN (sees the
read-only tool only). Without --fault it follows RFC 6750 section 3 (401 + ``WWW-Authenticate: Bearer``
with ``resource_metadata``), RFC 9728 (metadata at /.well-known/oauth-protected-resource/mcp) and MCP
2025-11-25 basic/transports (foreign Origin -> 403). Faults: no-resource-metadata (the well-known metadata
stays), no-metadata (neither the parameter nor the well-known metadata), no-auth-servers,
any-token, no-origin-check, purge-for-all, open. ``python tests/servers/guarded_http.py --port 0
[--fault F]`` prints ``ready on http://127.0.0.1:N/mcp``.
"""

from __future__ import annotations

import argparse
import hmac
import json
import os
from typing import Any

TOOLS = [
    {"name": "tide_now", "description": "The water level at the harbour mouth now.",
     "annotations": {"readOnlyHint": True}, "inputSchema": {"type": "object", "properties": {}}},
    {"name": "purge_ledger", "description": "Remove every closed booking from the ledger.",
     "annotations": {"readOnlyHint": False, "destructiveHint": True}, "inputSchema": {"type": "object", "properties": {}}},
]


class Guarded:
    def __init__(self, fault: str | None) -> None:
        self.fault = fault
        self.main = os.environ["FEELER_MAIN_TOKEN"].encode()
        self.low = os.environ["FEELER_LOW_TOKEN"].encode()

    async def __call__(self, scope: Any, receive: Any, send: Any) -> None:
        if scope["type"] == "lifespan":
            while True:
                message = await receive()
                if message["type"] == "lifespan.startup":
                    await send({"type": "lifespan.startup.complete"})
                elif message["type"] == "lifespan.shutdown":
                    await send({"type": "lifespan.shutdown.complete"})
                    return
        headers = dict(scope["headers"])
        host = headers.get(b"host", b"127.0.0.1").decode()
        base = f"http://{host}"
        if scope["method"] == "GET" and scope["path"] == "/.well-known/oauth-protected-resource/mcp" and self.fault != "no-metadata":
            meta: dict[str, Any] = {"resource": f"{base}/mcp", "authorization_servers": [f"{base}/as"]}
            if self.fault == "no-auth-servers":
                del meta["authorization_servers"]
            return await self.reply(send, 200, meta)
        if scope["path"] != "/mcp":
            return await self.reply(send, 404, {"error": "not found"})
        origin = headers.get(b"origin")
        if origin is not None and origin.decode() != base and self.fault != "no-origin-check":
            return await self.reply(send, 403, {"error": "forbidden origin"})
        role = self.role(headers.get(b"authorization"))
        if role is None:
            challenge = "Bearer" if self.fault in ("no-resource-metadata", "no-metadata") else f'Bearer resource_metadata="{base}/.well-known/oauth-protected-resource/mcp"'
            if headers.get(b"authorization") is not None:
                challenge += ', error="invalid_token"'
            return await self.reply(send, 401, {"error": "unauthorized"}, [(b"www-authenticate", challenge.encode())])
        body = b""
        while True:
            message = await receive()
            body += message.get("body", b"")
            if not message.get("more_body"):
                break
        request = json.loads(body or b"{}")
        if "id" not in request:
            return await self.reply(send, 202, None)
        return await self.reply(send, 200, {"jsonrpc": "2.0", "id": request["id"], **self.answer(request, role)})

    def role(self, given: bytes | None) -> str | None:
        if self.fault == "open":
            return "anonymous"
        if given is None:
            return None
        if hmac.compare_digest(given, b"Bearer " + self.main):
            return "main"
        if hmac.compare_digest(given, b"Bearer " + self.low):
            return "low"
        return "low" if self.fault == "any-token" else None

    def answer(self, request: dict[str, Any], role: str) -> dict[str, Any]:
        method = request.get("method")
        if method == "initialize":
            return {"result": {"protocolVersion": "2025-11-25", "capabilities": {"tools": {}},
                               "serverInfo": {"name": "guarded-http", "version": "0.0.1"}}}
        if method == "ping":
            return {"result": {}}
        if method == "tools/list":
            everyone = role == "main" or self.fault in ("purge-for-all", "open")
            return {"result": {"tools": TOOLS if everyone else TOOLS[:1]}}
        return {"error": {"code": -32601, "message": f"Method not found: {method}"}}

    @staticmethod
    async def reply(send: Any, status: int, data: Any, extra: list[tuple[bytes, bytes]] | None = None) -> None:
        body = b"" if data is None else json.dumps(data).encode()
        headers = [(b"content-type", b"application/json"), (b"content-length", str(len(body)).encode()), *(extra or [])]
        await send({"type": "http.response.start", "status": status, "headers": headers})
        await send({"type": "http.response.body", "body": body})


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--port", type=int, default=0)
    parser.add_argument("--fault", choices=["no-resource-metadata", "no-metadata", "no-auth-servers", "any-token", "no-origin-check", "purge-for-all", "open"])
    options = parser.parse_args()
    from feeler.demo._serve import serve_http

    serve_http(Guarded(options.fault), options.port)


if __name__ == "__main__":
    main()
