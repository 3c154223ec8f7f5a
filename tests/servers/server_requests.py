"""On tools/call, sends the client a ping request, a roots/list request, notifications/progress and
notifications/message, waits (at most 10 s) for the two answers, then answers the call saying whether
the client's answers were as expected. Speaks only the handshake era: 2026-07-28 forbids server requests.

Expected: ping -> result {} (MCP 2025-11-25 basic/utilities/ping); roots/list -> a result with a
``roots`` array if the client declared the ``roots`` capability in initialize, else error -32601
(MCP 2025-11-25 client/roots, "Error Handling"). Progress uses the call's progressToken, or the call id
when the client gave none.
"""

from __future__ import annotations

import json
import time
from typing import Any

from _wire import WireServer, main

WAIT_S = 10.0


class ServerRequests(WireServer):
    name = "server_requests"
    speaks_modern = False

    def capabilities(self) -> dict[str, Any]:
        return {"tools": {"listChanged": False}, "logging": {}}

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        token = (params.get("_meta") or {}).get("progressToken", request_id)
        self.send({"jsonrpc": "2.0", "id": "srv-ping", "method": "ping"})
        self.send({"jsonrpc": "2.0", "id": "srv-roots", "method": "roots/list"})
        self.send({"jsonrpc": "2.0", "method": "notifications/progress", "params": {"progressToken": token, "progress": 1, "total": 2, "message": "asked the client"}})
        self.send({"jsonrpc": "2.0", "method": "notifications/message", "params": {"level": "info", "logger": self.name, "data": "waiting for the client's answers"}})
        answers = self._collect({"srv-ping", "srv-roots"})
        wants_roots = "roots" in self.client_capabilities
        verdicts = {
            "ping": _ping_ok(answers.get("srv-ping")),
            "roots/list": _roots_ok(answers.get("srv-roots"), wants_roots),
        }
        report = {"as_expected": all(v == "ok" for v in verdicts.values()), "answers": verdicts}
        return {"content": [{"type": "text", "text": json.dumps(report)}], "structuredContent": report}

    def _collect(self, ids: set[str]) -> dict[str, dict[str, Any]]:
        """Read until every id in ``ids`` is answered or WAIT_S pass; other requests are served meanwhile."""
        answers: dict[str, dict[str, Any]] = {}
        deadline = time.monotonic() + WAIT_S
        while ids - answers.keys():
            left = deadline - time.monotonic()
            message = self.read_message(timeout=max(left, 0.0)) if left > 0 else None
            if message is None:
                break
            if "method" in message:
                self.handle(message)
            elif message.get("id") in ids:
                answers[message["id"]] = message
        return answers


def _ping_ok(answer: dict[str, Any] | None) -> str:
    if answer is None:
        return "no answer"
    return "ok" if answer.get("result") == {} else f"unexpected: {json.dumps(answer)[:200]}"


def _roots_ok(answer: dict[str, Any] | None, wants_roots: bool) -> str:
    if answer is None:
        return "no answer"
    if wants_roots:
        roots = (answer.get("result") or {}).get("roots")
        return "ok" if isinstance(roots, list) else f"expected a roots list: {json.dumps(answer)[:200]}"
    code = (answer.get("error") or {}).get("code")
    return "ok" if code == -32601 else f"expected error -32601 (no roots capability): {json.dumps(answer)[:200]}"


if __name__ == "__main__":
    main(ServerRequests)
