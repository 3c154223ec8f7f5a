"""SDK server whose `read_note` resolves its `path` argument under a notes folder and names the resolved path in its refusals.

The notes folder is argv[1], else $NOTES_ROOT, else the working folder. Refusals (``ToolError``):
"<resolved> is outside the notes folder <root>" and "no note at <resolved>".
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

from mcp.server.mcpserver import MCPServer
from mcp.server.mcpserver.exceptions import ToolError
from mcp_types import ToolAnnotations

from feeler.demo._declared import declared_tool

ROOT = Path(sys.argv[1] if len(sys.argv) > 1 else os.environ.get("NOTES_ROOT") or os.getcwd()).resolve()


def read_note(path: str) -> str:
    resolved = (ROOT / path).resolve()
    if resolved != ROOT and ROOT not in resolved.parents:
        raise ToolError(f"{resolved} is outside the notes folder {ROOT}")
    if not resolved.is_file():
        raise ToolError(f"no note at {resolved}")
    return resolved.read_text(encoding="utf-8", errors="replace")[:200]


TOOLS = [
    declared_tool(read_note, name="read_note", description="Read one note of the notes folder (a path relative to it).",
                  input_schema={"type": "object", "properties": {"path": {"type": "string", "maxLength": 40,
                                                                           "description": "The note's path."}},
                                "required": ["path"], "additionalProperties": False},
                  annotations=ToolAnnotations(read_only_hint=True)),
]
server = MCPServer("resolves-paths", version="1.0.0", tools=TOOLS, log_level="WARNING")

if __name__ == "__main__":
    server.run("stdio")
