"""Advertises a sloppy catalog: mistaken keywords (ge, le, maxlength, regex, required: true), a duplicate
name, missing descriptions, contradictory annotations, a non-object outputSchema, an outputSchema that breaks
the meta-schema, near-duplicate tools."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _wire import WireServer, main  # noqa: E402

OBJ = "object"
TOOLS: list[dict[str, Any]] = [
    {"name": "quote_stay", "description": "Quote a stay at the quay in cents for a number of nights.",
     "inputSchema": {"type": OBJ, "properties": {
         "nights": {"type": "integer", "ge": 1, "le": 14, "description": "Nights."},
         "vessel": {"type": "string", "maxlength": 40, "regex": "^[A-Z]", "required": True, "description": "Vessel."},
         "season": {"type": "string", "enum": ["low", "high"], "descripton": "Season."}}}},
    {"name": "quote_stay", "description": "A second tool of the same name.", "inputSchema": {"type": OBJ}},
    {"name": "purge_ledger", "description": "Remove every closed booking from the ledger.",
     "annotations": {"readOnlyHint": True, "destructiveHint": True}, "inputSchema": {"type": OBJ}},
    {"name": "tide_level", "inputSchema": {"type": OBJ, "properties": {"gauge": {"type": "integer"}}},
     "outputSchema": {"type": "number"}},
    {"name": "berth_depth", "description": "The depth of one berth at low water, in metres.", "inputSchema": {"type": OBJ},
     "outputSchema": {"type": OBJ, "properties": {"depth": {"type": "metres"}}}},
    {"name": "fuel_price", "description": "Return the price of one litre of diesel at the north pontoon today.",
     "inputSchema": {"type": OBJ}},
    {"name": "fuel_price_north", "description": "Return the price of one litre of diesel at the north pontoon, today.",
     "inputSchema": {"type": OBJ}},
]


class SloppyCatalog(WireServer):
    name = "sloppy-catalog"

    def __init__(self) -> None:
        super().__init__()
        self.tools = TOOLS

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        return {"content": [{"type": "text", "text": "ok"}]}


if __name__ == "__main__":
    main(SloppyCatalog)
