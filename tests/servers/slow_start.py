"""Sleeps 1.5 s before reading stdin, then behaves like the plain wire server (FEELER_SLOW_START_S overrides the delay)."""

from __future__ import annotations

import os
import time

from _wire import WireServer, main


class SlowStart(WireServer):
    name = "slow_start"


if __name__ == "__main__":
    time.sleep(float(os.environ.get("FEELER_SLOW_START_S", "1.5")))
    main(SlowStart)
