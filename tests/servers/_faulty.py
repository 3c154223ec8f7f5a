"""Base for servers that misbehave on one tool only: ``bad`` misbehaves, ``echo`` works (see _wire.py).

feeler must report the fault on ``bad`` and still test ``echo`` (issue 13: "the run goes on with the
other tools where it can").
"""

from __future__ import annotations

from typing import Any

from _wire import ECHO_TOOL, WireServer

BAD_TOOL = {**ECHO_TOOL, "name": "bad", "description": "Misbehaves on every call."}


class FaultyServer(WireServer):
    """Subclasses implement :meth:`misbehave` for calls to ``bad``."""

    def __init__(self) -> None:
        super().__init__()
        self.tools = [BAD_TOOL, ECHO_TOOL]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if params.get("name") == "bad":
            return self.misbehave(params, request_id)
        return self.call_echo(params)

    def misbehave(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        raise NotImplementedError

    def result_for(self, params: dict[str, Any], text: str = "ok") -> dict[str, Any]:
        result: dict[str, Any] = {"content": [{"type": "text", "text": text}]}
        return {"resultType": "complete", **result} if self.is_modern(params) else result
