"""Tool ``say`` writes the bytes it is given (base64 in ``b64``) to stdout as its whole answer, with every
``$ID`` replaced by the request's id in JSON: a way to feed a client any answer at all. Other calls: echo."""

from __future__ import annotations

import base64
import json
from typing import Any

from _wire import ECHO_TOOL, NoAnswer, WireServer, main

SAY_TOOL = {
    "name": "say",
    "description": "Answer with exactly these bytes.",
    "inputSchema": {"type": "object", "properties": {"b64": {"type": "string"}}, "required": ["b64"]},
}


class SaysWhatItIsTold(WireServer):
    name = "says_what_it_is_told"

    def __init__(self) -> None:
        super().__init__()
        self.tools = [SAY_TOOL, ECHO_TOOL]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if params.get("name") != "say":
            return self.call_echo(params)
        data = base64.b64decode(str((params.get("arguments") or {}).get("b64", "")))
        self.write_raw(data.replace(b"$ID", json.dumps(request_id).encode()))
        raise NoAnswer


if __name__ == "__main__":
    main(SaysWhatItIsTold)
