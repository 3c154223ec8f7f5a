"""Speaks only 2026-07-28: initialize gets -32022 naming ["2026-07-28"]; every request must carry the _meta envelope (else -32602)."""

from __future__ import annotations

from _wire import WireServer, main


class ModernOnly(WireServer):
    name = "modern_only"
    speaks_handshake = False


if __name__ == "__main__":
    main(ModernOnly)
