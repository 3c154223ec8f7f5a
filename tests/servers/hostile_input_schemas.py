"""Advertises, beside ``echo``, tools whose input schemas would make a naive generator hang or crash: lower
counts no argument can reach (``minLength: 1e308``, ``minItems: 1000000000``), patterns whose matching takes
exponential time on a near miss (three shapes a shape check refuses, one it cannot see), and an upper count
of ``1e308`` that is harmless; ``echo`` echoes, every other tool answers ``ok`` to a string ``a`` and
refuses anything else with ``isError``."""

from __future__ import annotations

from typing import Any

from _wire import ECHO_TOOL, WireServer, main


def _one(name: str, **keywords: Any) -> dict[str, Any]:
    kind = keywords.pop("type", "string")
    value = {"type": kind, "description": f"One {kind}.", **keywords}
    return {"name": name, "description": f"Takes one {kind} ({name}).",
            "inputSchema": {"type": "object", "properties": {"a": value}, "required": ["a"]}}


TOOLS: list[dict[str, Any]] = [
    _one("huge_min_length", minLength=1e308),
    _one("huge_min_items", type="array", minItems=1_000_000_000),
    _one("same_alternatives", pattern="^(a|a)*$", minLength=30, maxLength=60),
    _one("greedy_rounds", pattern="^(.*a){20}$", minLength=30, maxLength=60),
    _one("nested_bounds", pattern="^(a{1,30}){1,30}$", minLength=30),
    # no repeat at all, so no shape check refuses it; each (a|a) doubles the ways a near miss is tried
    _one("chained_alternatives", pattern="^" + "(a|a)" * 30 + "$"),
    _one("huge_max_length", maxLength=1e308),
]


class HostileInputSchemas(WireServer):
    name = "hostile-input-schemas"

    def __init__(self) -> None:
        super().__init__()
        self.tools = [*TOOLS, ECHO_TOOL]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if params.get("name") == "echo":
            return self.call_echo(params)
        arguments = params.get("arguments")
        if not isinstance(arguments, dict) or not isinstance(arguments.get("a"), str):
            return {"content": [{"type": "text", "text": "a must be a string"}], "isError": True}
        return {"content": [{"type": "text", "text": "ok"}]}


if __name__ == "__main__":
    main(HostileInputSchemas)
