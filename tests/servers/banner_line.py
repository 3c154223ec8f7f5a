"""Prints a human banner line on stdout before any JSON-RPC (MCP basic/transports, stdio: stdout carries only
MCP messages), then behaves normally."""

from __future__ import annotations

import sys

from _wire import WireServer, main


class BannerLine(WireServer):
    name = "banner_line"

    def run(self) -> None:
        sys.stdout.buffer.write(b"banner_line server 1.0 starting, press Ctrl-C to quit\n")
        sys.stdout.buffer.flush()
        super().run()


if __name__ == "__main__":
    main(BannerLine)
