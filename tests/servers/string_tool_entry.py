"""tools/list holds a plain string beside the echo tool (MCP schema: every entry of ``tools`` is a Tool object)."""

from __future__ import annotations

from _wire import ECHO_TOOL, WireServer, main


class StringToolEntry(WireServer):
    name = "string_tool_entry"

    def __init__(self) -> None:
        super().__init__()
        self.tools = ["lookup", ECHO_TOOL]  # type: ignore[list-item]


if __name__ == "__main__":
    main(StringToolEntry)
