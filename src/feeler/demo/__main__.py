"""``python -m feeler.demo [--http --port N] [--release current|next]``: serve the demo server.

Without ``--http`` the server speaks newline-delimited JSON-RPC on stdin/stdout (stdout is the wire, so
nothing else is printed there). With ``--http`` it serves Streamable HTTP at ``http://127.0.0.1:N/mcp``
and says so on standard error.
"""

from __future__ import annotations

import argparse
from collections.abc import Sequence


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m feeler.demo", description="Serve feeler's demo MCP server.")
    parser.add_argument("--http", action="store_true", help="serve Streamable HTTP instead of stdio")
    parser.add_argument("--port", type=int, default=0, help="TCP port for --http (default 0: a free port)")
    parser.add_argument("--release", choices=["current", "next"], default="current", help="which release to serve")
    options = parser.parse_args(argv)

    from feeler.demo.server import next_server, server

    chosen = next_server if options.release == "next" else server
    if options.http:
        from feeler.demo._serve import serve_http

        serve_http(chosen.streamable_http_app(), options.port)
    else:
        chosen.run("stdio")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
