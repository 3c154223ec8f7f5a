"""Reads every line but never answers anything: not initialize, not server/discover, not ping. Exits when stdin ends."""

from __future__ import annotations

from _wire import WireServer, main


class NeverInitializes(WireServer):
    name = "never_initializes"

    def run(self) -> None:
        while self.read_message() is not None:
            pass


if __name__ == "__main__":
    main(NeverInitializes)
