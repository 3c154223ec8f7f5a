"""The fast MCP server for bench_world.py: raw newline-delimited JSON-RPC on stdio, records keyed by returned ids.

Handshake era only (MCP 2025-11-25 basic/lifecycle), like echo_server.py. Tools: ``list_items``
(read-only, no arguments: the discovery pass calls it), ``create_item`` (returns ``{"id", "name"}`` in
structuredContent), ``get_item`` (needs an ``item_id`` create_item returned, else ``isError``). Kept small so
the bench measures feeler, not the server; bounded (the oldest items go first).
"""

from __future__ import annotations

import json
import sys

KNOWN = ("2024-11-05", "2025-03-26", "2025-06-18", "2025-11-25")
RO = {"readOnlyHint": True, "idempotentHint": True}
RW = {"readOnlyHint": False, "destructiveHint": False, "idempotentHint": False}
TOOLS = [
    {"name": "list_items", "description": "The newest items.", "annotations": RO,
     "inputSchema": {"type": "object", "properties": {}, "additionalProperties": False}},
    {"name": "create_item", "description": "Create an item; returns its id.", "annotations": RW,
     "inputSchema": {"type": "object", "properties": {"name": {"type": "string", "minLength": 1, "maxLength": 40}},
                     "required": ["name"], "additionalProperties": False}},
    {"name": "get_item", "description": "One item by id.", "annotations": RO,
     "inputSchema": {"type": "object", "properties": {"item_id": {"type": "string", "pattern": "^it-[0-9]+$"}},
                     "required": ["item_id"], "additionalProperties": False}},
]  # fmt: skip
ITEMS: dict[str, dict] = {}


def call(name: str, args: dict) -> dict:
    if name == "list_items":
        shown = list(ITEMS.values())[-10:]
        return {"content": [{"type": "text", "text": json.dumps(shown)}], "structuredContent": {"items": shown}}
    if name == "create_item" and isinstance(args.get("name"), str):
        item = {"id": f"it-{len(ITEMS) + 1}", "name": args["name"]}
        ITEMS[item["id"]] = item
        while len(ITEMS) > 1000:
            del ITEMS[next(iter(ITEMS))]
        return {"content": [{"type": "text", "text": json.dumps(item)}], "structuredContent": item}
    if name == "get_item" and args.get("item_id") in ITEMS:
        item = ITEMS[args["item_id"]]
        return {"content": [{"type": "text", "text": json.dumps(item)}], "structuredContent": item}
    return {"content": [{"type": "text", "text": "no such item or bad arguments"}], "isError": True}


def answer(message: dict) -> dict | None:
    method, rid = message.get("method"), message.get("id")
    if rid is None:
        return None
    params = message.get("params") or {}
    if method == "initialize":
        version = params.get("protocolVersion")
        result = {"protocolVersion": version if version in KNOWN else KNOWN[-1],
                  "capabilities": {"tools": {"listChanged": False}}, "serverInfo": {"name": "bench-world", "version": "1"}}
    elif method == "tools/list":
        result = {"tools": TOOLS}
    elif method == "tools/call":
        args = params.get("arguments")
        result = call(str(params.get("name")), args if isinstance(args, dict) else {})
    elif method == "ping":
        result = {}
    else:
        return {"jsonrpc": "2.0", "id": rid, "error": {"code": -32601, "message": f"Method not found: {method}"}}
    return {"jsonrpc": "2.0", "id": rid, "result": result}  # fmt: skip


if __name__ == "__main__":
    from echo_server import main  # the same newline-JSON loop (this folder is on sys.path when run as a script)

    main(answer)
