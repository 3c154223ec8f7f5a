"""Advertises, beside ``echo``, tool ``deep`` (an input schema nested 100 levels), ``wide`` (about 5 MB of
schema) and ``many`` (an enum of 20,000 values); calls to them answer like echo."""

from __future__ import annotations

from typing import Any

from _wire import ECHO_TOOL, WireServer, main


def _deep(levels: int) -> dict[str, Any]:
    schema: dict[str, Any] = {"type": "string"}
    for _ in range(levels):
        schema = {"type": "object", "properties": {"a": schema}}
    return schema


class OversizedSchemas(WireServer):
    name = "oversized_schemas"

    def __init__(self) -> None:
        super().__init__()
        wide = {"type": "object", "properties": {f"p{i}": {"type": "string", "description": "x" * 500}
                                                 for i in range(10_000)}}
        many = {"type": "object", "properties": {"v": {"enum": list(range(20_000))}}}
        self.tools = [{"name": "deep", "inputSchema": _deep(100)}, {"name": "wide", "inputSchema": wide},
                      {"name": "many", "inputSchema": many}, ECHO_TOOL]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        return self.call_echo({**params, "name": "echo"})


if __name__ == "__main__":
    main(OversizedSchemas)
