"""Speaks only the handshake era (2024-11-05 .. 2025-11-25): server/discover gets -32601, _meta envelopes are ignored."""

from __future__ import annotations

from _wire import WireServer, main


class LegacyOnly(WireServer):
    name = "legacy_only"
    speaks_modern = False


if __name__ == "__main__":
    main(LegacyOnly)
