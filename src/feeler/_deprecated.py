"""Old option and key names, accepted for one release with a one-line notice naming the new one.

Every entry point (CLI options, ``[tool.feeler]`` keys, pytest options) calls :func:`notice`; the notice
goes to standard error once per process and old name, so scripts keep working and people see what to
change.
"""

from __future__ import annotations

import sys

__all__ = ["notice"]

_shown: set[str] = set()


def notice(old: str, new: str) -> str:
    """Print (once) that *old* is deprecated in favour of *new*; return the text."""
    text = f"feeler: {old} is deprecated and will be removed in the next release; use {new}"
    if old not in _shown:
        _shown.add(old)
        print(text, file=sys.stderr)
    return text
