"""Prints an error to stderr and exits with code 2 before reading anything."""

from __future__ import annotations

import sys

if __name__ == "__main__":
    print("exits_at_start: configuration file harbour.toml not found", file=sys.stderr, flush=True)
    sys.exit(2)
