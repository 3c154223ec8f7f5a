"""Serve an SDK server's Streamable HTTP app with uvicorn on the loopback interface.

Shared by the demo's ``--http`` mode and the HTTP test servers. Port 0 picks a free port; the line
``ready on http://127.0.0.1:PORT/mcp`` on standard error says where, once the socket is listening.
"""

from __future__ import annotations

import asyncio
import sys
from typing import Any

__all__ = ["HOST", "serve_http"]

HOST = "127.0.0.1"


def serve_http(app: Any, port: int, *, path: str = "/mcp") -> None:
    """Run ``app`` on ``127.0.0.1:port`` until interrupted.

    :param app: an ASGI application (e.g. ``MCPServer.streamable_http_app()``).
    :param port: the TCP port, or 0 for a free one.
    :param path: the endpoint path, only used in the ready line.
    """
    import uvicorn

    config = uvicorn.Config(app, host=HOST, port=port, log_level="warning", lifespan="on")
    server = uvicorn.Server(config)
    asyncio.run(_serve(server, path))


async def _serve(server: Any, path: str) -> None:
    task = asyncio.ensure_future(server.serve())
    # Bounded wait: uvicorn sets ``started`` once the socket listens, or the task ends on failure.
    for _ in range(1000):
        if server.started or task.done():
            break
        await asyncio.sleep(0.01)
    if server.started:
        port = server.servers[0].sockets[0].getsockname()[1]
        print(f"ready on http://{HOST}:{port}{path}", file=sys.stderr, flush=True)
    await task
    if not server.started:
        raise SystemExit(f"could not listen on {HOST}: see the uvicorn messages above")
