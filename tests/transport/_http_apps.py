"""Small MCP servers on loopback HTTP for the HTTP transport tests.

Built with the official SDK (``mcp.server.mcpserver.MCPServer``, mcp 2.x) and served by uvicorn on
127.0.0.1. Run as a script, one server per process::

    python tests/transport/_http_apps.py --port 8765 --mode stateful-sse

Modes (how the SDK is asked to serve the same tools):

``stateful-sse``   Streamable HTTP at ``/mcp``, sessions on, request answers as ``text/event-stream``
``stateful-json``  Streamable HTTP at ``/mcp``, sessions on, request answers as ``application/json``
``stateless``      Streamable HTTP at ``/mcp``, no sessions (``stateless_http=True``)
``legacy-sse``     the 2024-11-05 HTTP+SSE transport: GET ``/sse``, POST to the ``endpoint`` it names
``bearer``         like ``stateful-json`` but every request needs ``Authorization: Bearer <token>``, the
                   token being the value of the environment variable ``HTTP_APPS_TOKEN``
``odd-sse``        our own misbehaving legacy SSE endpoints (plain Starlette, no SDK):
                   ``/sse-elsewhere`` names an endpoint on another origin, ``/sse-bulky`` sends a valid endpoint
                   and then one ``message`` event of 100 000 bytes, ``/sse-quiet`` sends only keep-alive comments
"""

from __future__ import annotations

import argparse
import os

import anyio

import mcp_types as types
from mcp.server.auth.provider import AccessToken
from mcp.server.auth.settings import AuthSettings
from mcp.server.mcpserver import Context, MCPServer
from mcp.shared.message import ServerMessageMetadata

MODES = ("stateful-sse", "stateful-json", "stateless", "legacy-sse", "bearer", "odd-sse")
#: size of the one message event /sse-bulky sends
BULKY_EVENT_BYTES = 100_000


class _EnvTokenVerifier:
    """Accepts exactly the token held in ``HTTP_APPS_TOKEN`` (the SDK's TokenVerifier protocol)."""

    async def verify_token(self, token: str) -> AccessToken | None:
        expected = os.environ.get("HTTP_APPS_TOKEN", "")
        if expected and token == expected:
            return AccessToken(token=token, client_id="transport-tests", scopes=[])
        return None


def build_server(mode: str, port: int) -> MCPServer:
    """The tools every mode serves; names say what they do."""
    kwargs: dict = {}
    if mode == "bearer":
        base = f"http://127.0.0.1:{port}"
        kwargs = {
            "token_verifier": _EnvTokenVerifier(),
            "auth": AuthSettings(issuer_url=base, resource_server_url=f"{base}/mcp", required_scopes=[]),
        }
    server = MCPServer("transport-test-server", version="0.0.1", **kwargs)

    @server.tool()
    def repeat_word(word: str, times: int = 1) -> str:
        """Return *word* repeated *times* times, space separated."""
        return " ".join([word] * times)

    @server.tool()
    def bulky_text(size: int) -> str:
        """Return a text of *size* letters (for the answer-size cap)."""
        return "x" * size

    @server.tool()
    async def chatty_count(steps: int, ctx: Context, pause: float = 0.0) -> str:
        """Send a log message per step, *pause* seconds apart, before answering (several events on one answer)."""
        for step in range(steps):
            if pause:
                await anyio.sleep(pause)
            await ctx.info(f"step {step}")
        return f"counted {steps}"

    @server.tool()
    async def ping_first(ctx: Context) -> str:
        """Send a ``ping`` request to the client and answer only once the client has replied."""
        # related_request_id puts the ping on this call's own SSE answer, not on a GET stream
        await ctx.session.send_request(
            types.PingRequest(), types.EmptyResult, metadata=ServerMessageMetadata(related_request_id=ctx.request_id)
        )
        return "client answered the ping"

    return server


def build_odd_sse_app():  # -> Starlette
    """Legacy-SSE endpoints that break the rules a client must catch."""
    from starlette.applications import Starlette
    from starlette.responses import Response, StreamingResponse
    from starlette.routing import Route

    def stream(*events: bytes, then_wait: bool = True):
        async def body():
            for event in events:
                yield event
            while then_wait:  # keep the stream open (comments only) until the client goes away
                await anyio.sleep(0.2)
                yield b": still here\n\n"

        return StreamingResponse(body(), media_type="text/event-stream")

    async def elsewhere(request):
        return stream(b"event: endpoint\ndata: http://127.0.0.2:9/messages/?session_id=x\n\n")

    async def bulky(request):
        big = b"data: " + b"y" * BULKY_EVENT_BYTES + b"\n\n"
        return stream(b"event: endpoint\ndata: /messages/\n\n", b"event: message\n" + big)

    async def quiet(request):
        return stream(b": nothing to say\n\n")

    async def messages(request):
        return Response(status_code=202)

    return Starlette(routes=[
        Route("/sse-elsewhere", elsewhere), Route("/sse-bulky", bulky), Route("/sse-quiet", quiet),
        Route("/messages/", messages, methods=["POST"]),
    ])


def build_app(mode: str, port: int):  # -> Starlette
    """The ASGI app for *mode*."""
    if mode == "odd-sse":
        return build_odd_sse_app()
    server = build_server(mode, port)
    if mode == "legacy-sse":
        return server.sse_app()
    return server.streamable_http_app(
        json_response=mode in ("stateful-json", "bearer"),
        stateless_http=mode == "stateless",
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--port", type=int, required=True)
    parser.add_argument("--mode", choices=MODES, required=True)
    args = parser.parse_args()

    import uvicorn

    uvicorn.run(build_app(args.mode, args.port), host="127.0.0.1", port=args.port, log_level="warning")


if __name__ == "__main__":
    main()
