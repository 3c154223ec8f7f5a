"""stdio: the server is a child process; one JSON-RPC message per line on its stdin and stdout.

The calling thread reads stdout itself (``select`` + ``os.read``), so a round trip costs no thread hand-off.
stderr is drained by one daemon thread into a bounded buffer, kept for error messages and reports.
Shutdown follows the spec's advice (MCP 2025-11-25 basic/lifecycle, "stdio" shutdown): close stdin,
wait, SIGTERM to the process group, wait, SIGKILL to the process group.

Process hygiene: each server starts in its own session and process group; a transport still open when
feeler exits is closed by an ``atexit`` hook (SIGTERM and SIGHUP unwind through ``feeler._signals``).
Every server gets ``FEELER_SERVER_TAG`` in its environment; on close, a process that still carries the
tag but left the server's process group (e.g. a grandchild started with ``setsid``) is named in a
:class:`EscapedProcessWarning` (Linux, where ``/proc`` shows environments).
"""

from __future__ import annotations

import atexit
import itertools
import os
import select
import selectors
import shutil
import signal
import subprocess
import sys
import threading
import time
import warnings
import weakref
from collections import deque
from collections.abc import Mapping, Sequence

from feeler.errors import ConnectError, RequestTimeout, ResponseTooLarge, ServerExited, TargetError
from feeler.transport.base import DEFAULT_MAX_MESSAGE_BYTES, Inbound, Transport

__all__ = ["EscapedProcessWarning", "StdioTransport", "TAG_NAME"]

#: The environment variable that marks every process a server (and its children) runs as.
TAG_NAME = "FEELER_SERVER_TAG"
_TAGS = itertools.count(1)
#: Open transports, closed at interpreter exit if nobody closed them.
_LIVE: weakref.WeakSet[StdioTransport] = weakref.WeakSet()


class EscapedProcessWarning(UserWarning):
    """A process started by the server left its process group and outlived the server."""


def _close_live() -> None:
    for transport in list(_LIVE):
        try:
            transport.close()
        except Exception:  # noqa: BLE001 - best effort at exit; the next one must still be closed
            pass


atexit.register(_close_live)

#: How much of the server's stderr is kept (the tail).
STDERR_KEEP_BYTES = 64 * 1024
_READ_CHUNK = 256 * 1024


class _StderrTail:
    """Keeps the last *limit* bytes a process wrote to stderr, read by a daemon thread."""

    def __init__(self, stream: object, limit: int = STDERR_KEEP_BYTES) -> None:
        self._chunks: deque[bytes] = deque()
        self._size = 0
        self._limit = limit
        self._lock = threading.Lock()
        self._thread = threading.Thread(target=self._drain, args=(stream,), name="feeler-stderr", daemon=True)
        self._thread.start()

    def _drain(self, stream: object) -> None:
        fd = stream.fileno()  # type: ignore[attr-defined]
        while True:
            try:
                chunk = os.read(fd, 65536)
            except OSError:
                return
            if not chunk:
                return
            with self._lock:
                self._chunks.append(chunk)
                self._size += len(chunk)
                while self._size > self._limit and len(self._chunks) > 1:
                    self._size -= len(self._chunks.popleft())

    def text(self) -> str:
        with self._lock:
            data = b"".join(self._chunks)[-self._limit :]
        return data.decode("utf-8", errors="replace")

    def tail(self, lines: int = 5) -> str:
        return "\n".join(self.text().rstrip().splitlines()[-lines:])

    def join(self, timeout: float) -> None:
        self._thread.join(timeout)


class StdioTransport(Transport):
    """Start *command* and talk newline-delimited JSON-RPC over its stdin/stdout.

    :param command: the program and its arguments.
    :param env: extra environment variables, added to this process's environment.
    :param cwd: working directory for the server.
    :param shutdown_grace: seconds to wait after closing stdin, and again after SIGTERM.
    """

    kind = "stdio"

    def __init__(
        self,
        target: str,
        command: Sequence[str],
        *,
        env: Mapping[str, str] | None = None,
        cwd: str | None = None,
        max_message_bytes: int = DEFAULT_MAX_MESSAGE_BYTES,
        shutdown_grace: float = 2.0,
    ) -> None:
        super().__init__(target, max_message_bytes=max_message_bytes)
        if not command:
            raise ConnectError("no command given: put the server's command line after `--`", target=target)
        self.command = list(command)
        self.env = dict(env or {})
        self.cwd = cwd
        self.shutdown_grace = shutdown_grace
        self.proc: subprocess.Popen[bytes] | None = None
        self._stderr: _StderrTail | None = None
        self._buf = bytearray()
        self._scan_from = 0
        self._discarding = False
        self._selector: selectors.BaseSelector | None = None
        self._eof = False
        self._tag = ""
        self._exit_waited = False

    # -- life cycle ----------------------------------------------------------------------------
    def open(self, timeout: float) -> None:
        program = self.command[0]
        if os.sep not in program and shutil.which(program, path=self._path()) is None:
            raise ConnectError(
                f"command not found: {program!r}; check the command after `--` and your PATH", target=self.target
            )
        self._tag = f"{os.getpid()}.{next(_TAGS)}.{time.time_ns()}"
        env = {**os.environ, **self.env, TAG_NAME: self._tag}
        try:
            self.proc = subprocess.Popen(
                self.command,
                stdin=subprocess.PIPE,
                stdout=subprocess.PIPE,
                stderr=subprocess.PIPE,
                env=env,
                cwd=self.cwd,
                bufsize=0,
                start_new_session=True,  # own process group, so shutdown can signal the whole tree
            )
        except FileNotFoundError as exc:
            what = f"working directory {self.cwd!r}" if self.cwd and not os.path.isdir(self.cwd) else repr(program)
            raise ConnectError(f"cannot start the server: {what} does not exist", target=self.target) from exc
        except PermissionError as exc:
            raise ConnectError(f"cannot start the server: {program!r} is not executable", target=self.target) from exc
        except OSError as exc:
            raise ConnectError(f"cannot start the server: {exc}", target=self.target) from exc
        _LIVE.add(self)
        assert self.proc.stdin is not None and self.proc.stdout is not None and self.proc.stderr is not None
        os.set_blocking(self.proc.stdin.fileno(), False)  # send() waits with select, bounded by its timeout
        os.set_blocking(self.proc.stdout.fileno(), False)  # receive() reads first and waits only when it must
        self._stderr = _StderrTail(self.proc.stderr)
        self._selector = selectors.DefaultSelector()
        self._selector.register(self.proc.stdout.fileno(), selectors.EVENT_READ)

    def _path(self) -> str | None:
        return self.env.get("PATH", os.environ.get("PATH"))

    @property
    def pid(self) -> int | None:
        return self.proc.pid if self.proc else None

    def alive(self) -> bool:
        return self.proc is not None and self.proc.poll() is None

    # -- wire ----------------------------------------------------------------------------------
    def send(self, text: str, *, headers: Mapping[str, str] | None = None, timeout: float = 30.0) -> None:
        """Write one line, waiting at most *timeout* for the server to take it.

        While the server's stdin is full its stdout is drained into the buffer: a server blocked writing
        answers nobody reads would otherwise never read again, and both sides would wait forever.
        """
        proc = self._require_open()
        data = (text if text.endswith("\n") else text + "\n").encode("utf-8")
        assert proc.stdin is not None and proc.stdout is not None
        fd_in, fd_out = proc.stdin.fileno(), proc.stdout.fileno()
        deadline = time.monotonic() + timeout
        view = memoryview(data)
        try:
            while view:
                try:
                    view = view[os.write(fd_in, view):]
                    continue
                except BlockingIOError:
                    pass
                remaining = deadline - time.monotonic()
                if remaining <= 0:
                    raise RequestTimeout(f"the server took no input for {timeout:g}s (its stdin is full)",
                                         target=self.target)
                drain = not self._eof and len(self._buf) <= 2 * self.max_message_bytes
                readable, _, _ = select.select([fd_out] if drain else [], [fd_in], [], remaining)
                if readable:
                    try:
                        chunk = os.read(fd_out, _READ_CHUNK)
                    except BlockingIOError:
                        continue  # nothing after all (the read end is non-blocking)
                    if chunk:
                        self._buf += chunk
                    else:
                        self._eof = True
        except (BrokenPipeError, ConnectionResetError, ValueError, OSError) as exc:
            raise self._exited("the server stopped reading its stdin") from exc

    def receive(self, timeout: float) -> Inbound:
        proc = self._require_open()
        deadline = time.monotonic() + timeout
        assert proc.stdout is not None and self._selector is not None
        fd = proc.stdout.fileno()
        while True:
            taken = self._take_line()
            if taken is not None:
                return Inbound(taken[0], not_utf8=taken[1])
            if self._eof:
                raise self._exited("the server closed its stdout")
            try:  # a fast server has often answered while the request was written: no wait needed then
                chunk = os.read(fd, _READ_CHUNK)
            except BlockingIOError:
                remaining = deadline - time.monotonic()
                if remaining <= 0:
                    raise RequestTimeout(f"no answer within {timeout:g}s", target=self.target) from None
                self._selector.select(remaining)
                continue
            if not chunk:
                self._eof = True
                continue
            self._buf += chunk

    def _take_line(self) -> tuple[str, bool] | None:
        """Cut one complete line from the buffer; enforce the size cap. None when no line is complete, else
        the text and whether its bytes were not UTF-8 (then decoded with U+FFFD for each bad byte)."""
        while True:
            newline = self._buf.find(b"\n", self._scan_from)
            if newline < 0:
                if self._discarding:
                    self._buf.clear()
                    self._scan_from = 0
                    return None
                self._scan_from = len(self._buf)
                if len(self._buf) > self.max_message_bytes:
                    self._buf.clear()
                    self._scan_from = 0
                    self._discarding = True
                    raise self._too_large()
                return None
            raw = bytes(self._buf[:newline])
            del self._buf[: newline + 1]
            self._scan_from = 0
            if self._discarding:
                self._discarding = False  # the end of the oversized line: drop it and go on
                continue
            if len(raw) > self.max_message_bytes:
                raise self._too_large()
            try:  # MCP basic/transports "stdio": messages are UTF-8; the session reports a line that is not
                text, not_utf8 = raw.decode("utf-8").rstrip("\r"), False
            except UnicodeDecodeError:
                text, not_utf8 = raw.decode("utf-8", errors="replace").rstrip("\r"), True
            if text.strip():
                return text, not_utf8

    def _too_large(self) -> ResponseTooLarge:
        return ResponseTooLarge(
            f"an answer exceeded the size cap of {self.max_message_bytes:,} bytes and was discarded "
            "(raise it with --max-message-bytes)",
            target=self.target,
        )

    def _require_open(self) -> subprocess.Popen[bytes]:
        if self.proc is None:
            raise TargetError("the transport is not open", target=self.target)
        return self.proc

    def _exited(self, what: str) -> ServerExited:
        code = None
        if self.proc is not None:
            try:  # a short wait for the exit status, once: a server that closed stdout may live on
                code = self.proc.wait(timeout=0.0 if self._exit_waited else 0.5)
            except subprocess.TimeoutExpired:
                code = self.proc.poll()
            self._exit_waited = True
        if self._stderr is not None and code is not None:
            self._stderr.join(0.5)  # the tail of an exited server's stderr is complete once the pipe ends
        tail = self._stderr.tail() if self._stderr else ""
        status = f"exit code {code}" if code is not None and code >= 0 else (
            f"killed by signal {-code}" if code is not None else "still running"
        )
        message = f"{what} ({status})"
        if tail:
            message += f"; stderr ends with: {tail.splitlines()[-1][:300]}"
        return ServerExited(message, target=self.target, returncode=code, stderr_tail=tail)

    def diagnostics(self) -> str:
        return self._stderr.tail(20) if self._stderr else ""

    def stderr_text(self) -> str:
        return self._stderr.text() if self._stderr else ""

    # -- shutdown ------------------------------------------------------------------------------
    def close(self) -> None:
        proc = self.proc
        if proc is None:
            return
        try:
            try:
                if proc.stdin is not None:
                    proc.stdin.close()
            except OSError:
                pass
            if not _wait(proc, self.shutdown_grace):
                _signal_group(proc, signal.SIGTERM)
                if not _wait(proc, self.shutdown_grace):
                    _signal_group(proc, signal.SIGKILL)
                    _wait(proc, 5.0)
        finally:
            # Also when the waits above are cut short (Ctrl-C, SIGTERM): the group never outlives close().
            # The server may have left children in its group: they go with it.
            self.proc = None
            _signal_group(proc, signal.SIGKILL, only_if_left=True)
            _LIVE.discard(self)
        escaped = _escaped(self._tag, proc.pid)
        if escaped:
            names = "; ".join(f"pid {pid} ({cmd})" for pid, cmd in escaped)
            warnings.warn(
                f"{self.target}: the server left {len(escaped)} process(es) running outside its process group, "
                f"which feeler did not end: {names}; end them with `kill PID` and make the server keep its "
                "children in its own process group",
                EscapedProcessWarning,
                stacklevel=2,
            )
        if self._selector is not None:
            self._selector.close()
            self._selector = None
        for stream in (proc.stdout, proc.stderr):
            try:
                if stream is not None:
                    stream.close()
            except OSError:
                pass
        # keep the stderr tail readable after close
        self.proc_returncode = proc.returncode


def _wait(proc: subprocess.Popen[bytes], seconds: float) -> bool:
    try:
        proc.wait(timeout=seconds)
        return True
    except subprocess.TimeoutExpired:
        return False


def _signal_group(proc: subprocess.Popen[bytes], sig: int, *, only_if_left: bool = False) -> None:
    if sys.platform == "win32":  # pragma: no cover - no process groups
        if not only_if_left:
            proc.kill()
        return
    try:
        os.killpg(proc.pid, sig)
    except (ProcessLookupError, PermissionError):
        pass


def _escaped(tag: str, group: int) -> list[tuple[int, str]]:
    """Live processes carrying *tag* outside process group *group* (empty where ``/proc`` is missing)."""
    if not os.path.isdir("/proc"):
        return []
    marker = f"{TAG_NAME}={tag}".encode()
    found = []
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            with open(f"/proc/{entry}/environ", "rb") as handle:
                if marker not in handle.read().split(b"\0"):
                    continue
            with open(f"/proc/{entry}/stat", "rb") as handle:
                fields = handle.read().rpartition(b")")[2].split()
            with open(f"/proc/{entry}/cmdline", "rb") as handle:
                cmdline = handle.read().replace(b"\0", b" ").decode("utf-8", "replace").strip()
        except OSError:  # gone meanwhile, or not ours to read
            continue
        # proc(5) /proc/pid/stat: state is field 3, pgrp field 5 (here index 0 and 2, after the command)
        if len(fields) > 2 and fields[0] not in (b"Z", b"X") and int(fields[2]) != group:
            found.append((int(entry), cmdline[:120]))
    return found
