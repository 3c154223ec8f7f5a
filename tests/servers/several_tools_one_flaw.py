"""Five tools that validate their arguments; one (``charlie``) answers -32603 when ``n`` ends in 7.

A campaign target: the stdlib wire loop starts in a blink, the tools answer at once, and the flaw is
found by drawn go cases (no boundary value of ``n`` ends in 7), so the example database matters.
"""

from __future__ import annotations

from typing import Any

from _wire import ECHO_TOOL, RpcError, WireServer, main

INTERNAL_ERROR = -32603
NAMES = ("alpha", "bravo", "charlie", "delta")
SCHEMA = {
    "type": "object",
    "properties": {"n": {"type": "integer", "minimum": 0, "maximum": 100000}},
    "required": ["n"],
    "additionalProperties": False,
}


class SeveralTools(WireServer):
    name = "several-tools"

    def __init__(self) -> None:
        super().__init__()
        self.tools = [ECHO_TOOL] + [
            {"name": name, "description": f"Return n ({name}).", "inputSchema": SCHEMA, "annotations": {"readOnlyHint": True}}
            for name in NAMES
        ]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        name = params.get("name")
        if name == "echo":
            return self.call_echo(params)
        if name not in NAMES:
            raise RpcError(-32602, f"Unknown tool: {name!r}")
        args = params.get("arguments")
        n = args.get("n") if isinstance(args, dict) else None
        if not isinstance(args, dict) or set(args) != {"n"} or type(n) is not int or not 0 <= n <= 100000:
            return {"content": [{"type": "text", "text": "n must be an integer from 0 to 100000"}], "isError": True}
        if name == "charlie" and n % 10 == 7:
            raise RpcError(INTERNAL_ERROR, "Internal error")
        return {"content": [{"type": "text", "text": str(n)}]}


if __name__ == "__main__":
    main(SeveralTools)
