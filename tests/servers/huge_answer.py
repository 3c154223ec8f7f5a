"""Answers tools/call with one text block of about 64 MiB, generated lazily and written 1 MiB at a time.

FEELER_HUGE_MIB sets the size in MiB (default 64). The frame is one valid JSON-RPC line.
"""

from __future__ import annotations

import json
import os
from typing import Any

from _wire import NoAnswer, WireServer, main

CHUNK = b"0123456789abcdef" * 65536  # 1 MiB of JSON-safe text


class HugeAnswer(WireServer):
    name = "huge_answer"

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        mib = int(os.environ.get("FEELER_HUGE_MIB", "64"))
        head = {"jsonrpc": "2.0", "id": request_id, "result": {"content": [{"type": "text", "text": ""}]}}
        if self.is_modern(params):
            head["result"] = {"resultType": "complete", **head["result"]}
        # Split the serialized frame at the empty text and stream the text in between.
        prefix, suffix = json.dumps(head, separators=(",", ":")).encode().split(b'"text":""', 1)
        self.write_raw(prefix + b'"text":"')
        for _ in range(mib):
            self.write_raw(CHUNK)
        self.write_raw(b'"' + suffix + b"\n")
        raise NoAnswer


if __name__ == "__main__":
    main(HugeAnswer)
