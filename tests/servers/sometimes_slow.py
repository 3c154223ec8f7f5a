"""Every second call to ``bad`` sleeps FEELER_SLEEP_S (default 3) seconds before answering (a late answer)."""

from __future__ import annotations

import os
import time
from typing import Any

from _faulty import FaultyServer
from _wire import main


class SometimesSlow(FaultyServer):
    name = "sometimes_slow"
    calls = 0

    def misbehave(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self.calls += 1
        if self.calls % 2 == 0:
            time.sleep(float(os.environ.get("FEELER_SLEEP_S", "3")))
        return self.call_echo({**params, "name": "echo"})


if __name__ == "__main__":
    main(SometimesSlow)
