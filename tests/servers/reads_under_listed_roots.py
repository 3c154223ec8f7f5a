"""Read tools that refuse any path outside the allowed roots, and a listing tool whose answer names those roots.

SDK server (MCPServer) with hand-written schemas. ``list_roots`` (read-only, no arguments) answers
``{"roots": [...]}``; ``read_text`` and ``stat_path`` (read-only) take a ``path`` and accept only a root
or a path below one, refusing every other path with ``isError`` ("path is outside the allowed roots").
Nothing else is wrong with it: with values learned from ``list_roots`` every read go case is accepted.
``python tests/servers/reads_under_listed_roots.py`` serves stdio.
"""

from __future__ import annotations

from typing import Any

from mcp.server.mcpserver import MCPServer
from mcp.server.mcpserver.exceptions import ToolError
from mcp_types import ToolAnnotations

from feeler.demo._declared import declared_tool

ROOTS = ["/srv/quay/logs", "/srv/quay/charts"]
PURE = ToolAnnotations(read_only_hint=True, idempotent_hint=True, open_world_hint=False)
PATH_INPUT = {
    "type": "object",
    "properties": {"path": {"type": "string", "minLength": 1, "maxLength": 200, "description": "A root or a path below one."}},
    "required": ["path"],
    "additionalProperties": False,
}


def _allowed(path: str) -> str:
    for root in ROOTS:
        if path == root or path.startswith(root + "/"):
            return root
    raise ToolError("path is outside the allowed roots; list_roots names them")


def list_roots() -> dict[str, Any]:
    return {"roots": list(ROOTS)}


def read_text(path: str) -> dict[str, Any]:
    root = _allowed(path)
    return {"path": path, "text": f"(contents of {path[len(root):] or 'the root'})"}


def stat_path(path: str) -> dict[str, Any]:
    root = _allowed(path)
    return {"path": path, "kind": "directory" if path == root else "file"}


TOOLS = [
    declared_tool(list_roots, name="list_roots", description="The roots the read tools accept.",
                  input_schema={"type": "object", "properties": {}, "additionalProperties": False},
                  output_schema={"type": "object", "properties": {"roots": {"type": "array", "items": {"type": "string"}}},
                                 "required": ["roots"]}, annotations=PURE),
    declared_tool(read_text, name="read_text", description="Read a text file under one of the roots.", input_schema=PATH_INPUT,
                  output_schema={"type": "object", "properties": {"path": {"type": "string"}, "text": {"type": "string"}},
                                 "required": ["path", "text"]}, annotations=PURE),
    declared_tool(stat_path, name="stat_path", description="Whether a path under one of the roots is a file or a directory.",
                  input_schema=PATH_INPUT,
                  output_schema={"type": "object", "properties": {"path": {"type": "string"},
                                 "kind": {"type": "string", "enum": ["file", "directory"]}}, "required": ["path", "kind"]},
                  annotations=PURE),
]  # fmt: skip

server = MCPServer("reads-under-listed-roots", version="1.0.0", tools=TOOLS, log_level="WARNING")

if __name__ == "__main__":
    server.run("stdio")
