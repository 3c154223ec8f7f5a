"""Starts two sleeping children at start-up: one in its own session (setsid: it escapes the process group)
and one in the server's group; prints both pids to stderr (``escaped=PID grouped=PID``), then serves.

Both children sleep at most FEELER_CHILD_S (default 60) seconds.
"""

from __future__ import annotations

import os
import subprocess
import sys

from _wire import WireServer, main

SLEEP = f"import time; time.sleep({float(os.environ.get('FEELER_CHILD_S', '60'))})"


class ForksGrandchild(WireServer):
    name = "forks_grandchild"

    def run(self) -> None:
        quiet = {"stdin": subprocess.DEVNULL, "stdout": subprocess.DEVNULL, "stderr": subprocess.DEVNULL}
        escaped = subprocess.Popen([sys.executable, "-c", SLEEP], start_new_session=True, **quiet)
        grouped = subprocess.Popen([sys.executable, "-c", SLEEP], **quiet)
        self.log(f"escaped={escaped.pid} grouped={grouped.pid}")
        super().run()


if __name__ == "__main__":
    main(ForksGrandchild)
