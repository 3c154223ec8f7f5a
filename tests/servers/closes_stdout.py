"""On a call to ``bad`` closes its stdout but keeps running (reading stdin) until stdin ends."""

from __future__ import annotations

import os
from typing import Any

from _faulty import FaultyServer
from _wire import NoAnswer, main


class ClosesStdout(FaultyServer):
    name = "closes_stdout"

    def misbehave(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self._out.flush()
        os.close(1)
        self._out = open(os.devnull, "wb")  # later answers go nowhere; the process stays alive
        raise NoAnswer


if __name__ == "__main__":
    main(ClosesStdout)
