"""Answers calls to ``bad`` with a line holding bytes that are not UTF-8 (RFC 8259 section 8.1 requires it)."""

from __future__ import annotations

import json
from typing import Any

from _faulty import FaultyServer
from _wire import NoAnswer, main


class InvalidUtf8(FaultyServer):
    name = "invalid_utf8"

    def misbehave(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        frame = json.dumps({"jsonrpc": "2.0", "id": request_id, "result": self.result_for(params, "MARK")}).encode()
        self.write_raw(frame.replace(b"MARK", b"caf\xe9 \xff\xfe") + b"\n")
        raise NoAnswer


if __name__ == "__main__":
    main(InvalidUtf8)
