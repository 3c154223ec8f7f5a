"""File helpers shared by the CLI and the report writers."""

from __future__ import annotations

import json
import os
import tempfile
from typing import Any

__all__ = ["read_json_file", "write_text_atomic"]


def read_json_file(path: str, what: str) -> Any:
    """The JSON value in *path*; a :class:`~feeler.errors.UsageError` naming *what* the file should be."""
    from feeler.errors import UsageError

    try:
        with open(path, encoding="utf-8") as handle:
            return json.load(handle)
    except OSError as exc:
        raise UsageError(f"cannot read the {what} {path}: {exc.strerror}") from exc
    except json.JSONDecodeError as exc:
        raise UsageError(f"{path}:{exc.lineno}:{exc.colno}: the {what} is not valid JSON ({exc.msg})") from exc


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
