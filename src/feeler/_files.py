"""File helpers shared by the CLI and the report writers."""

from __future__ import annotations

import os
import tempfile
from typing import Any

__all__ = ["read_json_file", "write_text_atomic"]


def read_json_file(path: str, what: str) -> Any:
    """The JSON value in *path*; a :class:`~feeler.errors.UsageError` naming *what* the file should be.

    Read through :mod:`feeler._read` (special files refused, size cap, UTF-8 checked)."""
    from feeler._read import read_json

    return read_json(path, what=f"the {what}", expect=None, fix=f"give a {what} file written by feeler")


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
