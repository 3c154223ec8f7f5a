"""Puts a bearer token, a secret environment value and absolute paths into every answer of its one tool.

The data folder named in its errors is argv[1], else $HARBOUR_DATA, else its working folder.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _wire import INVALID_PARAMS, RpcError, WireServer, main  # noqa: E402

LOOKUP = {
    "name": "lookup",
    "description": "Look up one mooring record by its key.",
    "annotations": {"readOnlyHint": True},
    "inputSchema": {
        "type": "object",
        "properties": {"key": {"type": "string", "maxLength": 5}},
        "required": ["key"],
        "additionalProperties": False,
    },
}


class LeaksSecrets(WireServer):
    name = "leaks-secrets"

    def __init__(self) -> None:
        super().__init__()
        self.tools = [LOOKUP]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        token = os.environ.get("HARBOUR_API_TOKEN", "")
        dsn = os.environ.get("HARBOUR_DSN", "")
        here = sys.argv[1] if len(sys.argv) > 1 else os.environ.get("HARBOUR_DATA", os.getcwd())
        arguments = params.get("arguments")
        if not isinstance(arguments, dict) or not isinstance(arguments.get("key"), str) or len(arguments["key"]) > 5:
            raise RpcError(INVALID_PARAMS, f"bad key; connected with {dsn} as {token}")
        if arguments["key"] == "":
            text = f"records kept in {here}/moorings.db and {Path.home()}/.harbour/cache (dsn {dsn})"
            return {"content": [{"type": "text", "text": text}]}
        text = f"Error: cannot open {here}/data/{arguments['key']}.db (dsn={dsn}, token={token})"
        return {"content": [{"type": "text", "text": text}], "isError": True}


if __name__ == "__main__":
    main(LeaksSecrets)
