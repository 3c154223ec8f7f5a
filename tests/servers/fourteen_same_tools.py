"""Fourteen tools that all accept a non-object `arguments` (array, string, null) with a success result."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _wire import INVALID_PARAMS, RpcError, WireServer, main  # noqa: E402

NAMES = [f"gauge_{n:02d}" for n in range(1, 15)]


def _tool(name: str) -> dict[str, Any]:
    return {
        "name": name,
        "description": f"Read tide gauge number {name[-2:]} of the quay.",
        "annotations": {"readOnlyHint": True},
        "inputSchema": {"type": "object", "properties": {"hours": {"type": "integer", "minimum": 0, "maximum": 48}}},
    }


class FourteenSameTools(WireServer):
    name = "fourteen-same-tools"

    def __init__(self) -> None:
        super().__init__()
        self.tools = [_tool(n) for n in NAMES]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if params.get("name") not in NAMES:
            raise RpcError(INVALID_PARAMS, f"Unknown tool: {params.get('name')!r}")
        arguments = params.get("arguments")
        if not isinstance(arguments, dict):
            return {"content": [{"type": "text", "text": "level 2.4 m"}]}  # the shared defect
        hours = arguments.get("hours", 0)
        if set(arguments) - {"hours"} or not isinstance(hours, int) or isinstance(hours, bool) or not 0 <= hours <= 48:
            return {"content": [{"type": "text", "text": "hours must be a whole number from 0 to 48"}], "isError": True}
        return {"content": [{"type": "text", "text": f"level 2.4 m over {hours} h"}]}


if __name__ == "__main__":
    main(FourteenSameTools)
