"""Ignores SIGTERM and keeps running after stdin ends (for at most FEELER_LINGER_S, default 60, seconds)."""

from __future__ import annotations

import os
import signal
import time

from _wire import WireServer, main


class IgnoresSigterm(WireServer):
    name = "ignores_sigterm"

    def run(self) -> None:
        signal.signal(signal.SIGTERM, signal.SIG_IGN)
        super().run()
        time.sleep(float(os.environ.get("FEELER_LINGER_S", "60")))  # bounded: only SIGKILL ends it sooner


if __name__ == "__main__":
    main(IgnoresSigterm)
