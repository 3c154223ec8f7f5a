"""The call log: JSON Lines, one line per tool call, written as the run goes (memory stays flat).

Each line: ``time`` (UTC, RFC 3339 with milliseconds), ``tool``, ``kind`` (go / no-go / chain), ``source``
(where the values came from: schema, known, learned, chain, sampled), ``argumentsDigest`` (SHA-256 of
the canonical JSON of the arguments, first 16 hex digits), ``outcome`` (``entered``: a success result;
``stopped``: isError or -32602; ``broke``: any other error, a crash, a timeout, an exit), ``checks`` (the
checks that found an error on this call), ``durationSeconds``, ``requestBytes``, ``answerBytes``.
"""

from __future__ import annotations

import hashlib
import json
import os
import time
from datetime import datetime, timezone
from typing import IO, Any

__all__ = ["CallLog", "call_outcome", "case_source", "read_call_log"]

#: Case.origin (before the vocabulary's ``source``) -> source
_ORIGIN_SOURCE = {"boundary": "schema", "mutation": "schema", "hypothesis": "sampled"}


def case_source(case: Any) -> str:
    source = getattr(case, "source", None)
    if source:
        return str(source)
    origin = getattr(case, "origin", "") or ""
    return _ORIGIN_SOURCE.get(origin, origin or "schema")


def call_outcome(ctx: Any) -> str:
    """entered / stopped / broke, as the vocabulary names them."""
    ex = ctx.exchange
    if ctx.failure is not None or ex is None:
        return "broke"
    error = ex.error
    if error is not None:
        return "stopped" if error.get("code") == -32602 else "broke"
    if isinstance(ex.result, dict):
        return "stopped" if ex.is_error_result else "entered"
    return "broke"


#: the encoders, made once (json.dumps makes one per call when given options)
_CANONICAL = json.JSONEncoder(sort_keys=True, separators=(",", ":"), ensure_ascii=False, default=str).encode
_LINE = json.JSONEncoder(ensure_ascii=False, separators=(",", ":"), default=str).encode


def _digest(arguments: Any) -> str:
    return hashlib.sha256(_CANONICAL(arguments).encode("utf-8")).hexdigest()[:16]


def _utf8_size(text: str) -> int:
    return len(text) if text.isascii() else len(text.encode("utf-8"))


#: the call log is flushed at least this often (seconds), besides when its buffer fills and at flush()/close()
FLUSH_EVERY = 0.25


class CallLog:
    """Append-only JSON Lines file. Opening it again continues it; a half-written last line (the process
    was killed mid-write) is cut off first, so every line of the file is whole JSON.

    Lines are written as the calls end, through the file's buffer: it reaches the disk when it fills, at
    least every :data:`FLUSH_EVERY` seconds, on :meth:`flush` (a campaign flushes before it saves its
    state, so the state never counts a call the log does not have) and on :meth:`close`.

    Use :meth:`hook` as :attr:`feeler.check.runner.Runner.on_call`.
    """

    def __init__(self, path: str) -> None:
        self.path = path
        os.makedirs(os.path.dirname(os.path.abspath(path)), exist_ok=True)
        _cut_partial_line(path)
        self._file: IO[str] | None = open(path, "a", encoding="utf-8", newline="\n")  # noqa: SIM115
        self.lines = 0
        self._flushed = time.monotonic()
        self._second = -1  # the whole second of the last time stamp, and its text (RFC 3339, UTC)
        self._stamp = ""

    def write(self, record: dict[str, Any]) -> None:
        if self._file is None:
            return
        self._file.write(_LINE(record) + "\n")
        self.lines += 1
        now = time.monotonic()
        if now - self._flushed >= FLUSH_EVERY:
            self._file.flush()
            self._flushed = now

    def flush(self) -> None:
        """Write every line so far to the file."""
        if self._file is not None:
            self._file.flush()
            self._flushed = time.monotonic()

    def _time(self) -> str:
        """Now, as RFC 3339 UTC with milliseconds (``2026-12-04T09:28:44.123Z``); the seconds part is
        formatted once per second."""
        now = time.time()
        second = int(now)
        if second != self._second:
            self._second = second
            self._stamp = datetime.fromtimestamp(second, timezone.utc).strftime("%Y-%m-%dT%H:%M:%S")
        return f"{self._stamp}.{int((now - second) * 1000):03d}Z"

    def hook(self, tool: Any, case: Any, ctx: Any, failed: list[str]) -> None:
        ex = ctx.exchange
        self.write(
            {
                "time": self._time(),
                "tool": tool.name,
                "kind": case.kind,
                "source": case_source(case),
                "argumentsDigest": _digest(case.arguments),
                "outcome": call_outcome(ctx),
                "checks": sorted(set(failed)) if failed else [],
                "durationSeconds": round(ex.duration, 6) if ex is not None and ex.finished is not None else None,
                "requestBytes": _utf8_size(ex.request_text) if ex is not None else 0,
                "answerBytes": sum(_utf8_size(f.text) for f in ex.frames if f.direction == "in") if ex is not None else 0,
            }
        )

    def close(self) -> None:
        if self._file is not None:
            self._file.close()
            self._file = None

    def __enter__(self) -> CallLog:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def _cut_partial_line(path: str) -> None:
    try:
        size = os.path.getsize(path)
    except OSError:
        return
    if size == 0:
        return
    with open(path, "rb+") as handle:
        handle.seek(size - 1)
        if handle.read(1) == b"\n":
            return
        # Walk back to the last newline (bounded by the file size) and cut what follows.
        pos = size - 1
        block = 4096
        while pos > 0:
            start = max(0, pos - block)
            handle.seek(start)
            chunk = handle.read(pos - start)
            idx = chunk.rfind(b"\n")
            if idx >= 0:
                handle.truncate(start + idx + 1)
                return
            pos = start
        handle.truncate(0)


def read_call_log(path: str) -> list[dict[str, Any]]:
    """Every line of a call log (for tests and tools; a campaign itself never reads the whole log)."""
    with open(path, encoding="utf-8") as handle:
        return [json.loads(line) for line in handle if line.strip()]
