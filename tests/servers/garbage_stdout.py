"""Writes lines that are not JSON-RPC to stdout around each valid answer (a log line and a broken JSON line)."""

from __future__ import annotations

from typing import Any

from _wire import WireServer, main

GARBAGE = (b"DEBUG handling request\n", b'{"jsonrpc": "2.0", "id": \n', b"\x1b[32mOK\x1b[0m plain text\n")


class GarbageStdout(WireServer):
    name = "garbage_stdout"

    def send(self, message: dict[str, Any]) -> None:
        self.write_raw(GARBAGE[0] + GARBAGE[1])
        super().send(message)
        self.write_raw(GARBAGE[2])


if __name__ == "__main__":
    main(GarbageStdout)
