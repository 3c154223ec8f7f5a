"""Streamable HTTP only: an SDK server behind an ASGI wrapper that demands ``Authorization: Bearer <token>``.

The token is read from the environment variable FEELER_TEST_TOKEN (never from the command line). Any
request without exactly that token gets 401 with ``WWW-Authenticate: Bearer`` (RFC 6750 section 3;
MCP 2025-11-25 basic/authorization). Served by uvicorn on 127.0.0.1 at /mcp:
``FEELER_TEST_TOKEN=... python tests/servers/bearer_http.py --port N`` (``--http`` is accepted and implied).
It serves no Protected Resource Metadata, so the challenge carries no ``resource_metadata``.
"""

from __future__ import annotations

import argparse
import hmac
import json
import os
import sys
from typing import Any

TOKEN_VARIABLE = "FEELER_TEST_TOKEN"


def echo(text: str) -> str:
    return text


def build_server() -> Any:
    """The SDK server behind the wrapper (imported lazily: a missing token is reported at once)."""
    from mcp.server.mcpserver import MCPServer
    from mcp_types import ToolAnnotations

    from feeler.demo._declared import declared_tool

    return MCPServer(
        "bearer-http",
        version="1.0.0",
        tools=[
            declared_tool(
                echo,
                name="echo",
                description="Return the text it is given.",
                input_schema={"type": "object", "properties": {"text": {"type": "string", "maxLength": 1000}}, "required": ["text"], "additionalProperties": False},
                annotations=ToolAnnotations(read_only_hint=True, idempotent_hint=True, open_world_hint=False),
            )
        ],
        log_level="WARNING",
    )


class RequireBearer:
    """ASGI middleware: HTTP requests pass only with the expected bearer token."""

    def __init__(self, app: Any, token: str) -> None:
        self.app = app
        self.expected = f"Bearer {token}".encode()

    async def __call__(self, scope: Any, receive: Any, send: Any) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)  # lifespan events start the session manager
            return
        given = dict(scope["headers"]).get(b"authorization")
        if given is not None and hmac.compare_digest(given, self.expected):
            await self.app(scope, receive, send)
            return
        challenge = b"Bearer" if given is None else b'Bearer error="invalid_token"'
        body = json.dumps({"error": "unauthorized", "error_description": "a valid bearer token is required"}).encode()
        await send(
            {
                "type": "http.response.start",
                "status": 401,
                "headers": [(b"www-authenticate", challenge), (b"content-type", b"application/json"), (b"content-length", str(len(body)).encode())],
            }
        )
        await send({"type": "http.response.body", "body": body})


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--http", action="store_true", help="accepted for symmetry; this server only speaks HTTP")
    parser.add_argument("--port", type=int, default=0)
    options = parser.parse_args()
    token = os.environ.get(TOKEN_VARIABLE)
    if not token:
        print(f"bearer_http: set {TOKEN_VARIABLE} to the token clients must send", file=sys.stderr)
        raise SystemExit(2)
    from feeler.demo._serve import serve_http

    serve_http(RequireBearer(build_server().streamable_http_app(), token), options.port)


if __name__ == "__main__":
    main()
