"""Answers the handshake and tools/list, then exits with code 3 (and a stderr message) on any tools/call."""

from __future__ import annotations

import os
import sys
from typing import Any

from _wire import WireServer, main


class CrashesOnCall(WireServer):
    name = "crashes_on_call"

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        print("fatal: the tool backend is gone (simulated crash)", file=sys.stderr, flush=True)
        os._exit(3)


if __name__ == "__main__":
    main(CrashesOnCall)
