"""The one defensive reader for every file feeler reads (config, baselines, replays, catalogs, schemas).

Each step can refuse the file, always with one line naming the file, what is wrong and what to do:

1. ``stat``: a missing file, a folder, a FIFO, a device or a socket is refused *before* it is opened
   (opening a FIFO for reading blocks until a writer appears: common practice, POSIX ``open(2)``).
2. The file is opened with ``O_NONBLOCK`` (in case it was swapped for a FIFO after the ``stat``) and
   ``fstat``-ed again; at most *limit* bytes are read, one more byte means "too large".
3. The bytes must be UTF-8 (RFC 8259 section 8.1 for JSON; TOML 1.0 "A TOML file must be a valid UTF-8
   encoded Unicode document"); a leading byte order mark is dropped.
4. JSON or TOML is parsed; nesting too deep for the parser is a clear error, not a ``RecursionError``.
5. The top-level value must have the expected type.

The error class is the caller's: :class:`~feeler.errors.UsageError` for files the user names,
:class:`~feeler.errors.BaselineError` for baseline files.
"""

from __future__ import annotations

import json
import os
import stat
import sys
from typing import Any

from feeler.errors import FeelerError, UsageError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

__all__ = ["MAX_FILE_BYTES", "MAX_CONFIG_BYTES", "read_bytes", "read_json", "read_text", "read_toml"]

#: The default size cap for JSON files (catalogs, baselines, replays, schemas).
MAX_FILE_BYTES = 64 * 1024 * 1024
#: The size cap for pyproject.toml.
MAX_CONFIG_BYTES = 4 * 1024 * 1024

_KINDS = (
    (stat.S_ISDIR, "a folder"),
    (stat.S_ISFIFO, "a FIFO (named pipe)"),
    (stat.S_ISCHR, "a character device"),
    (stat.S_ISBLK, "a block device"),
    (stat.S_ISSOCK, "a socket"),
)
_TYPE_NAMES = {dict: "a JSON object", list: "a JSON list", str: "a string"}


def _special(mode: int) -> str | None:
    for test, name in _KINDS:
        if test(mode):
            return name
    return None if stat.S_ISREG(mode) else "not a regular file"


def _fail(error: type[FeelerError], path: str, problem: str, fix: str) -> FeelerError:
    return error(f"{path}: {problem}; {fix}")


def read_bytes(path: str | os.PathLike[str], *, fix: str, what: str = "the file", limit: int = MAX_FILE_BYTES,
               error: type[FeelerError] = UsageError) -> bytes:
    """The bytes of the regular file *path*, at most *limit* of them.

    :param fix: what the user should do, appended to every message.
    :raises FeelerError: of class *error*, one line, for a missing, special, unreadable or too large file.
    """
    name = os.fspath(path)
    try:
        info = os.stat(name)
    except FileNotFoundError:
        raise _fail(error, name, f"cannot read {what} (no such file)", fix) from None
    except OSError as exc:
        raise _fail(error, name, f"cannot read {what} ({exc.strerror or exc})", fix) from None
    kind = _special(info.st_mode)
    if kind:
        raise _fail(error, name, f"is {kind}, not a regular file; feeler reads only regular files", fix)
    if info.st_size > limit:
        raise _fail(error, name, f"is {info.st_size:,} bytes, over the {limit:,}-byte limit", fix)
    try:
        fd = os.open(name, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0))
    except OSError as exc:
        raise _fail(error, name, f"cannot read {what} ({exc.strerror or exc})", fix) from None
    try:
        kind = _special(os.fstat(fd).st_mode)
        if kind:  # swapped between stat and open
            raise _fail(error, name, f"is {kind}, not a regular file; feeler reads only regular files", fix)
        chunks: list[bytes] = []
        size = 0
        while size <= limit:  # bounded: stops one byte past the limit
            chunk = os.read(fd, min(1 << 20, limit + 1 - size))
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
    except OSError as exc:
        raise _fail(error, name, f"cannot read {what} ({exc.strerror or exc})", fix) from None
    finally:
        os.close(fd)
    if size > limit:
        raise _fail(error, name, f"is over the {limit:,}-byte limit", fix)
    return b"".join(chunks)


def read_text(path: str | os.PathLike[str], *, fix: str, what: str = "the file", limit: int = MAX_FILE_BYTES,
              error: type[FeelerError] = UsageError) -> str:
    """The file as UTF-8 text (a leading byte order mark dropped); see :func:`read_bytes`."""
    data = read_bytes(path, fix=fix, what=what, limit=limit, error=error)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise _fail(error, os.fspath(path), f"is not UTF-8 text (byte 0x{data[exc.start]:02x} at offset "
                    f"{exc.start}: a binary or wrongly encoded file)", fix) from None
    return text[1:] if text.startswith("\ufeff") else text


def _check_type(value: Any, expect: type | tuple[type, ...] | None, name: str, what: str, fix: str,
                error: type[FeelerError]) -> Any:
    if expect is None or isinstance(value, expect):
        return value
    wanted = " or ".join(_TYPE_NAMES.get(t, t.__name__) for t in (expect if isinstance(expect, tuple) else (expect,)))
    got = "null" if value is None else _TYPE_NAMES.get(type(value), f"a JSON {type(value).__name__}")
    raise _fail(error, name, f"{what} must be {wanted} at the top level, got {got}", fix)


def read_json(path: str | os.PathLike[str], *, what: str, fix: str, expect: type | tuple[type, ...] | None = dict,
              limit: int = MAX_FILE_BYTES, error: type[FeelerError] = UsageError) -> Any:
    """Parse the file as JSON (RFC 8259) and check its top-level type.

    :param what: what the file should be, e.g. ``"a catalog file"``, used in messages.
    :param expect: the allowed top-level type(s); None allows any.
    """
    name = os.fspath(path)
    text = read_text(path, fix=fix, what=what, limit=limit, error=error)
    try:
        value = json.loads(text)
    except json.JSONDecodeError as exc:
        raise _fail(error, f"{name}:{exc.lineno}:{exc.colno}", f"{what} is not valid JSON ({exc.msg} at line "
                    f"{exc.lineno}, column {exc.colno})", fix) from None
    except RecursionError:
        raise _fail(error, name, f"{what} is nested too deeply to parse", fix) from None
    except ValueError as exc:  # e.g. an integer with more digits than Python converts
        raise _fail(error, name, f"{what} holds a value feeler cannot read ({str(exc).splitlines()[0]})", fix) from None
    return _check_type(value, expect, name, what, fix, error)


def read_toml(path: str | os.PathLike[str], *, what: str = "the file", fix: str,
              limit: int = MAX_CONFIG_BYTES, error: type[FeelerError] = UsageError) -> dict[str, Any]:
    """Parse the file as TOML 1.0."""
    name = os.fspath(path)
    text = read_text(path, fix=fix, what=what, limit=limit, error=error)
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise _fail(error, name, f"{what} is not valid TOML ({str(exc).splitlines()[0]})", fix) from None
    except RecursionError:
        raise _fail(error, name, f"{what} is nested too deeply to parse", fix) from None
