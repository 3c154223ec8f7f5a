"""A well-behaved reference server built with the official SDK (MCPServer): feeler must report nothing on it.

Four read-only tools with strict hand-written schemas (``additionalProperties: false``, bounds, enum,
pattern, format, arrays of objects, nested objects). Every call is checked with ``jsonschema`` against the
published inputSchema (formats asserted), so bad arguments get ``isError: true`` (MCP 2025-11-25
server/tools, "Error Handling"); every result conforms to its outputSchema and mirrors it in a text block.
Strings from the caller are never re-encoded, so any Unicode input is fine.

``python tests/servers/clean_reference.py`` serves stdio; ``--http --port N`` serves Streamable HTTP at
http://127.0.0.1:N/mcp.
"""

from __future__ import annotations

import argparse
import hashlib
import json
from typing import Any

from mcp.server.mcpserver import MCPServer
from mcp_types import ToolAnnotations

from feeler.demo._declared import declared_tool

PURE = ToolAnnotations(read_only_hint=True, idempotent_hint=True, open_world_hint=False)
FACTORS = {"m": 1.0, "ft": 0.3048, "nmi": 1852.0}


def convert_length(value: float, unit_from: str, unit_to: str) -> dict[str, Any]:
    return {"value": value * FACTORS[unit_from] / FACTORS[unit_to], "unit": unit_to}


def word_count(text: str, distinct: bool = False) -> dict[str, Any]:
    words = text.split()
    return {"words": len(set(words)) if distinct else len(words), "characters": len(text)}


def schedule_slot(day: str, slot: str, attendees: list[dict[str, Any]]) -> dict[str, Any]:
    key = json.dumps([day, slot, attendees], sort_keys=True)  # ASCII-only encoding: safe for any input
    return {"confirmation": "SL-" + hashlib.sha256(key.encode("ascii")).hexdigest()[:8], "day": day, "slot": slot, "attendees": len(attendees)}


def tag_items(items: list[dict[str, Any]], tag: dict[str, Any]) -> dict[str, Any]:
    return {"tagged": len({item["id"] for item in items}), "tag": tag["name"], "color": tag.get("color", "grey")}


def _object(properties: dict[str, Any], required: list[str]) -> dict[str, Any]:
    return {"type": "object", "properties": properties, "required": required, "additionalProperties": False}


COLORS = ["grey", "red", "green", "blue"]
TOOLS = [
    declared_tool(
        convert_length,
        name="convert_length",
        description="Convert a length between metres, feet and nautical miles.",
        input_schema=_object(
            {
                "value": {"type": "number", "minimum": 0, "maximum": 1000000},
                "unit_from": {"type": "string", "enum": list(FACTORS)},
                "unit_to": {"type": "string", "enum": list(FACTORS)},
            },
            ["value", "unit_from", "unit_to"],
        ),
        output_schema=_object({"value": {"type": "number", "minimum": 0}, "unit": {"type": "string", "enum": list(FACTORS)}}, ["value", "unit"]),
        annotations=PURE,
    ),
    declared_tool(
        word_count,
        name="word_count",
        description="Count the words and characters of a text.",
        input_schema=_object({"text": {"type": "string", "maxLength": 2000}, "distinct": {"type": "boolean"}}, ["text"]),
        output_schema=_object({"words": {"type": "integer", "minimum": 0}, "characters": {"type": "integer", "minimum": 0, "maximum": 2000}}, ["words", "characters"]),
        annotations=PURE,
    ),
    declared_tool(
        schedule_slot,
        name="schedule_slot",
        description="Compute the confirmation code of a half-hour slot for up to five attendees.",
        input_schema=_object(
            {
                "day": {"type": "string", "format": "date"},
                "slot": {"type": "string", "pattern": "^([01][0-9]|2[0-3]):[03]0$"},
                "attendees": {
                    "type": "array",
                    "minItems": 1,
                    "maxItems": 5,
                    "items": _object({"email": {"type": "string", "format": "email", "maxLength": 100}, "optional": {"type": "boolean"}}, ["email"]),
                },
            },
            ["day", "slot", "attendees"],
        ),
        output_schema=_object(
            {
                "confirmation": {"type": "string", "pattern": "^SL-[0-9a-f]{8}$"},
                "day": {"type": "string", "format": "date"},
                "slot": {"type": "string"},
                "attendees": {"type": "integer", "minimum": 1, "maximum": 5},
            },
            ["confirmation", "day", "slot", "attendees"],
        ),
        annotations=PURE,
    ),
    declared_tool(
        tag_items,
        name="tag_items",
        description="Count the distinct items a tag would be applied to.",
        input_schema=_object(
            {
                "items": {
                    "type": "array",
                    "maxItems": 10,
                    "items": _object({"id": {"type": "integer", "minimum": 1, "maximum": 999}, "label": {"type": "string", "minLength": 1, "maxLength": 30}}, ["id", "label"]),
                },
                "tag": _object({"name": {"type": "string", "pattern": "^[a-z]{2,12}$"}, "color": {"type": "string", "enum": COLORS}}, ["name"]),
            },
            ["items", "tag"],
        ),
        output_schema=_object(
            {"tagged": {"type": "integer", "minimum": 0, "maximum": 10}, "tag": {"type": "string"}, "color": {"type": "string", "enum": COLORS}},
            ["tagged", "tag", "color"],
        ),
        annotations=PURE,
    ),
]

server = MCPServer("clean-reference", version="1.0.0", tools=TOOLS, log_level="WARNING")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--http", action="store_true")
    parser.add_argument("--port", type=int, default=0)
    options = parser.parse_args()
    if options.http:
        from feeler.demo._serve import serve_http

        serve_http(server.streamable_http_app(), options.port)
    else:
        server.run("stdio")


if __name__ == "__main__":
    main()
