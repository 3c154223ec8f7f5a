"""Speaks only 2026-07-28 and answers every tools/call with an InputRequiredResult (MCP 2026-07-28 basic/patterns/mrtr)."""

from __future__ import annotations

from typing import Any

from _wire import WireServer, main


class InputRequired(WireServer):
    name = "input_required"
    speaks_handshake = False

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        return {
            "resultType": "input_required",
            "inputRequests": {
                "confirm": {"method": "elicitation/create", "params": {"message": "Really?", "requestedSchema": {"type": "object", "properties": {}}}}
            },
            "requestState": "opaque-state-1",
        }


if __name__ == "__main__":
    main(InputRequired)
