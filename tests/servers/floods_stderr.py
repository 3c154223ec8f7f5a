"""Writes FEELER_FLOOD_MIB (default 16) MiB to stderr on every tools/call, then answers normally."""

from __future__ import annotations

import os
import sys
from typing import Any

from _faulty import FaultyServer
from _wire import main

LINE = b"flood: " + b"x" * 1016 + b"\n"  # 1 KiB


class FloodsStderr(FaultyServer):
    name = "floods_stderr"

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        for _ in range(int(os.environ.get("FEELER_FLOOD_MIB", "16")) * 1024):
            sys.stderr.buffer.write(LINE)
        sys.stderr.buffer.flush()
        return self.call_echo({**params, "name": "echo"})


if __name__ == "__main__":
    main(FloodsStderr)
