"""Four tools whose input schemas accept no value, and ``echo``; only ``echo`` answers (others: -32602).

The contradictions: crossed bounds, an ``enum`` whose members all fail ``type``, a required property
whose schema is ``false``, and one no keyword pair shows (a pattern whose only matches ``not`` forbids),
which only generation finds. feeler must name each as a catalog finding and still test ``echo``.
"""

from __future__ import annotations

from typing import Any

from _wire import ECHO_TOOL, WireServer, main

TOOLS: list[dict[str, Any]] = [
    {"name": "crossed_bounds", "description": "Book a berth for a number of nights.",
     "inputSchema": {"type": "object", "properties": {"nights": {"type": "integer", "minimum": 5, "maximum": 1}},
                     "required": ["nights"]}},
    {"name": "enum_off_type", "description": "Pick a mooring colour.",
     "inputSchema": {"type": "object", "properties": {"colour": {"type": "string", "enum": [1, 2]}}, "required": ["colour"]}},
    {"name": "false_property", "description": "Register a hull.",
     "inputSchema": {"type": "object", "properties": {"hull": False}, "required": ["hull"]}},
    {"name": "no_value_found", "description": "Name a pier.",
     "inputSchema": {"type": "object", "properties": {"pier": {"type": "string", "pattern": "^[a-c]$", "not": {"enum": ["a", "b", "c"]}}},
                     "required": ["pier"]}},
]  # fmt: skip


class UnsatisfiableSchemas(WireServer):
    name = "unsatisfiable-schemas"

    def __init__(self) -> None:
        super().__init__()
        self.tools = [*TOOLS, ECHO_TOOL]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        return self.call_echo(params)


if __name__ == "__main__":
    main(UnsatisfiableSchemas)
