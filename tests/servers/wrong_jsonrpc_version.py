"""Answers calls to ``bad`` with ``"jsonrpc": "1.0"`` (JSON-RPC 2.0 section 5: MUST be exactly "2.0")."""

from __future__ import annotations

from typing import Any

from _faulty import FaultyServer
from _wire import NoAnswer, main


class WrongJsonrpcVersion(FaultyServer):
    name = "wrong_jsonrpc_version"

    def misbehave(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self.send({"jsonrpc": "1.0", "id": request_id, "result": self.call_echo({**params, "name": "echo"})})
        raise NoAnswer


if __name__ == "__main__":
    main(WrongJsonrpcVersion)
