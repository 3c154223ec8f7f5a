"""SDK server whose `find_berths` crashes on a valid pattern, and whose `tide_log` returns its failures as success."""

from __future__ import annotations

import re
from typing import Any

from mcp.server.mcpserver import MCPServer
from mcp_types import ToolAnnotations

from feeler.demo._declared import declared_tool

READ = ToolAnnotations(read_only_hint=True)
BERTHS = ["N-01", "N-02", "S-01"]


def find_berths(pattern: str) -> str:
    return ", ".join(b for b in BERTHS if re.search(pattern, b))  # "[" is a valid string and a crash


def tide_log(day: int) -> str:
    if day > 3:
        return "Error: no such table: tides_archive"  # a failure dressed as a success
    return f"day {day}: high water 06:12, low water 12:30"


TOOLS = [
    declared_tool(find_berths, name="find_berths", description="List the berth codes that match a search pattern.",
                  input_schema={"type": "object", "properties": {"pattern": {"type": "string", "maxLength": 20}},
                                "required": ["pattern"], "additionalProperties": False}, annotations=READ),
    declared_tool(tide_log, name="tide_log", description="Read the tide log of one day of the week.",
                  input_schema={"type": "object", "properties": {"day": {"type": "integer", "minimum": 1, "maximum": 7}},
                                "required": ["day"], "additionalProperties": False}, annotations=READ),
]
server = MCPServer("hides-failures", version="1.0.0", tools=TOOLS, log_level="WARNING")

if __name__ == "__main__":
    server.run("stdio")
