"""Advertises FEELER_TOOLS (default 2,000) echo tools named echo_0 .. echo_N-1 on one tools/list page."""

from __future__ import annotations

import os
from typing import Any

from _wire import ECHO_TOOL, WireServer, main


class ManyTools(WireServer):
    name = "many_tools"

    def __init__(self) -> None:
        super().__init__()
        self.tools = [{**ECHO_TOOL, "name": f"echo_{i}"} for i in range(int(os.environ.get("FEELER_TOOLS", "2000")))]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        return self.call_echo({**params, "name": "echo"})


if __name__ == "__main__":
    main(ManyTools)
