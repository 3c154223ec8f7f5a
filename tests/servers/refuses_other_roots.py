"""Every tool takes a workspace root and refuses any root but one; list_entries also takes "3" where its schema says integer.

A wire-level server (``_wire.WireServer``) with three tools over one workspace. Each call is checked
with ``jsonschema`` against the published inputSchema and answered with ``isError: true`` when it
breaks it (MCP 2025-11-25 server/tools, "Error Handling"), then refused with one fixed message unless
``root`` is the allowed root (``FEELER_TEST_ROOT``, default ``/srv/orchard``). Two planted defects:

* ``list_entries`` turns a numeric string ``depth`` into an integer before checking it, so ``"3"`` is
  accepted where the schema says ``"type": "integer"`` (JSON Schema 2020-12 validation 6.1.1);
* ``count_entries`` lists an ``examples`` entry (``"folder"``) its own ``enum`` refuses (validation 9.5).
"""

from __future__ import annotations

import json
import os
import sys
from typing import Any

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from _wire import INVALID_PARAMS, RpcError, WireServer, main, text_result as _text  # noqa: E402
from jsonschema import Draft202012Validator  # noqa: E402

ROOT = os.environ.get("FEELER_TEST_ROOT", "/srv/orchard")
REFUSAL = "access denied: this root is not the workspace root"
ENTRIES = {"apples.txt": "12 crates", "pears.txt": "4 crates", "plums.txt": "none yet"}
_ROOT = {"type": "string", "minLength": 1, "maxLength": 200, "description": "The workspace root."}
PURE = {"readOnlyHint": True, "idempotentHint": True, "openWorldHint": False}


def _object(properties: dict[str, Any], required: list[str]) -> dict[str, Any]:
    return {"type": "object", "properties": properties, "required": required, "additionalProperties": False}


TOOLS = [
    {
        "name": "list_entries",
        "description": "List the entries of the workspace, down to a depth.",
        "inputSchema": _object({"root": _ROOT, "depth": {"type": "integer", "minimum": 0, "maximum": 5, "default": 1}}, ["root"]),
        "annotations": PURE,
    },
    {
        "name": "read_entry",
        "description": "Read the first characters of one entry.",
        "inputSchema": _object(
            {
                "root": _ROOT,
                "name": {"type": "string", "pattern": "^[a-z]{1,20}\\.txt$", "examples": ["apples.txt"]},
                "limit": {"type": "integer", "minimum": 1, "maximum": 100},
            },
            ["root", "name"],
        ),
        "annotations": PURE,
    },
    {
        "name": "count_entries",
        "description": "Count the entries of one kind.",
        "inputSchema": _object({"root": _ROOT, "kind": {"type": "string", "enum": ["file", "dir"], "examples": ["file", "folder"]}}, ["root"]),
        "annotations": PURE,
    },
]
_CHECKERS = {tool["name"]: Draft202012Validator(tool["inputSchema"]) for tool in TOOLS}


class RefusesOtherRoots(WireServer):
    name = "refuses-other-roots"

    def __init__(self) -> None:
        super().__init__()
        self.tools = TOOLS

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        name = params.get("name")
        if name not in _CHECKERS:
            raise RpcError(INVALID_PARAMS, f"Unknown tool: {name!r}")
        arguments = params.get("arguments", {})
        if not isinstance(arguments, dict):
            raise RpcError(INVALID_PARAMS, "arguments must be an object")
        arguments = dict(arguments)
        depth = arguments.get("depth")
        if name == "list_entries" and isinstance(depth, str) and depth.strip().isdigit():
            arguments["depth"] = int(depth)  # the planted defect: a numeric string passes as an integer
        errors = list(_CHECKERS[name].iter_errors(arguments))
        if errors:
            return _text(f"invalid arguments: {errors[0].message}", error=True)
        if arguments["root"] != ROOT:
            return _text(REFUSAL, error=True)
        if name == "list_entries":
            return _text(json.dumps(sorted(ENTRIES)))
        if name == "read_entry":
            body = ENTRIES.get(arguments["name"])
            if body is None:
                return _text(f"no entry named {arguments['name']!r}", error=True)
            return _text(body[: arguments.get("limit", 100)])
        kind = arguments.get("kind", "file")
        return _text(str(len(ENTRIES) if kind == "file" else 0))


if __name__ == "__main__":
    main(RefusesOtherRoots)
