"""Answers the first call to ``bad`` without the closing newline, then answers nothing more; exits when stdin ends."""

from __future__ import annotations

import json
from typing import Any

from _faulty import FaultyServer
from _wire import NoAnswer, main


class NoNewlineThenHang(FaultyServer):
    name = "no_newline_then_hang"
    hung = False

    def handle(self, message: dict[str, Any]) -> None:
        if not self.hung:
            super().handle(message)

    def misbehave(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self.write_raw(json.dumps({"jsonrpc": "2.0", "id": request_id, "result": self.result_for(params)}).encode())
        self.hung = True
        raise NoAnswer


if __name__ == "__main__":
    main(NoNewlineThenHang)
