"""File helpers shared by the CLI and the report writers."""

from __future__ import annotations

import os
import tempfile

__all__ = ["write_text_atomic"]


def write_text_atomic(path: str, text: str) -> None:
    """Write *text* to *path* through a temp file and a rename, so a crash never leaves half a file."""
    folder = os.path.dirname(os.path.abspath(path))
    os.makedirs(folder, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".feeler-", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as handle:
            handle.write(text)
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
