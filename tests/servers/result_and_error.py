"""Answers calls to ``bad`` with both ``result`` and ``error`` (JSON-RPC 2.0 section 5: exactly one of them)."""

from __future__ import annotations

from typing import Any

from _faulty import FaultyServer
from _wire import NoAnswer, main


class ResultAndError(FaultyServer):
    name = "result_and_error"

    def misbehave(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self.send({"jsonrpc": "2.0", "id": request_id, "result": self.result_for(params),
                   "error": {"code": -32603, "message": "Internal error"}})
        raise NoAnswer


if __name__ == "__main__":
    main(ResultAndError)
