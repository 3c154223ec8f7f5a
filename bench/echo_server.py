"""The minimal MCP server for bench_overhead.py: raw newline-delimited JSON-RPC on stdio, one ``echo`` tool.

Handshake era only (MCP 2025-11-25 basic/lifecycle): ``initialize`` echoes the requested version if it
knows it, ``tools/list``, ``tools/call``, ``ping``; -32601 for anything else (so a client probing for
2026-07-28 with ``server/discover`` falls back to ``initialize``). Kept as small as possible so the
bench measures the clients, not the server.
"""

from __future__ import annotations

import json
import sys

KNOWN = ("2024-11-05", "2025-03-26", "2025-06-18", "2025-11-25")
TOOL = {
    "name": "echo",
    "description": "Return the text it is given.",
    "inputSchema": {"type": "object", "properties": {"text": {"type": "string"}}, "required": ["text"]},
}

#: a nested-schema tool (bench/run): the server answers every call to it with "ok", validating nothing
NESTED = {
    "name": "order",
    "description": "Take an order.",
    "inputSchema": {
        "type": "object",
        "properties": {
            "id": {"type": "integer", "minimum": 0},
            "lines": {
                "type": "array",
                "maxItems": 5,
                "items": {
                    "type": "object",
                    "properties": {"sku": {"type": "string", "maxLength": 12}, "qty": {"type": "integer", "minimum": 1, "maximum": 99}},
                    "required": ["sku", "qty"],
                },
            },
            "note": {"type": "string"},
        },
        "required": ["id", "lines"],
    },
}


def answer(message: dict) -> dict | None:
    method, rid = message.get("method"), message.get("id")
    if rid is None:
        return None  # a notification (notifications/initialized)
    if method == "initialize":
        version = message.get("params", {}).get("protocolVersion")
        result = {
            "protocolVersion": version if version in KNOWN else KNOWN[-1],
            "capabilities": {"tools": {"listChanged": False}},
            "serverInfo": {"name": "bench-echo", "version": "1"},
        }
    elif method == "tools/list":
        result = {"tools": [TOOL, NESTED]}
    elif method == "tools/call":
        arguments = message.get("params", {}).get("arguments") or {}
        text = arguments.get("text", "") if isinstance(arguments, dict) else ""
        result = {"content": [{"type": "text", "text": text}]}
    elif method == "ping":
        result = {}
    else:
        return {"jsonrpc": "2.0", "id": rid, "error": {"code": -32601, "message": f"Method not found: {method}"}}
    return {"jsonrpc": "2.0", "id": rid, "result": result}


def main() -> None:
    out = sys.stdout
    for line in sys.stdin:
        if not line.strip():
            continue
        reply = answer(json.loads(line))
        if reply is not None:
            out.write(json.dumps(reply, separators=(",", ":")) + "\n")
            out.flush()


if __name__ == "__main__":
    main()
