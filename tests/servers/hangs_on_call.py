"""Never answers tools/call; keeps answering everything else (ping, tools/list) and stays alive until stdin ends."""

from __future__ import annotations

from typing import Any

from _wire import NoAnswer, WireServer, main


class HangsOnCall(WireServer):
    name = "hangs_on_call"

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        raise NoAnswer


if __name__ == "__main__":
    main(HangsOnCall)
