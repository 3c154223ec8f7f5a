"""Server-sent events for the HTTP transports: an incremental parser and a reader thread.

The parser follows the event-stream interpretation rules of the WHATWG HTML standard, section
"Server-sent events" (9.2.6 "Interpreting an event stream"): lines end in CRLF, LF or CR; a line starting
with ``:`` is a comment; ``data`` lines are joined with LF; a blank line dispatches the event; an event
with no ``data`` field is not dispatched; an unfinished event at the end of the stream is dropped.

We parse ourselves instead of using ``httpx2.EventSource`` because the size cap must count the bytes of
one event (including a line that has not ended yet) and stop reading at once, and because
``EventSource`` only exists in the httpx2 releases for Python 3.11+.

:class:`StreamPump` reads one SSE response on a daemon thread and hands its events to a queue. A thread,
not lazy reads in ``receive()``, because httpcore fixes a stream's read timeout when the body starts,
while every ``receive(timeout)`` call has its own deadline; the queue gives exact deadlines and lets the
session answer a server request (another POST) while the stream stays open.
"""

from __future__ import annotations

import queue
import socket
import threading
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Any

__all__ = ["EventTooLarge", "SSEEvent", "SSEParser", "StreamEnded", "StreamPump"]

_BOM = b"\xef\xbb\xbf"


@dataclass(frozen=True)
class SSEEvent:
    """One dispatched event.

    :param event: the event type; ``"message"`` when the stream named none.
    :param data: the ``data`` lines joined with LF (may be empty: a priming event).
    :param id: the last event id seen on the stream so far ("" if none).
    :param retry: the ``retry`` field of this event in milliseconds, if it had one.
    """

    event: str = "message"
    data: str = ""
    id: str = ""
    retry: int | None = None


class EventTooLarge(Exception):
    """One event grew past the cap; *size* is the number of bytes seen when reading stopped."""

    def __init__(self, size: int, cap: int) -> None:
        super().__init__(f"an SSE event exceeded {cap} bytes ({size} bytes read)")
        self.size = size
        self.cap = cap


class SSEParser:
    """Turns chunks of bytes into :class:`SSEEvent` values, one event at most *max_event_bytes* long.

    :param max_event_bytes: cap on the bytes of one event's field lines plus any unfinished line.
    """

    def __init__(self, max_event_bytes: int) -> None:
        self.max_event_bytes = max_event_bytes
        self._buffer = bytearray()
        self._started = False
        self._event_bytes = 0
        self._type = ""
        self._data: list[str] = []
        self._has_data = False
        self._last_id = ""
        self._retry: int | None = None

    def feed(self, chunk: bytes) -> Iterator[SSEEvent]:
        """Parse *chunk*; yield the events it completed. Raises :class:`EventTooLarge`.

        A generator, so events completed before an oversized one are still delivered.
        """
        self._buffer += chunk
        if not self._started and len(self._buffer) >= len(_BOM):
            self._started = True
            if self._buffer.startswith(_BOM):  # one leading BOM is ignored (WHATWG 9.2.6)
                del self._buffer[: len(_BOM)]
        for line in self._complete_lines(final=False):
            event = self._line(line)
            if event is not None:
                yield event
        # the unfinished tail counts too: a server that never ends a line must not fill memory
        self._check(len(self._buffer))

    def finish(self) -> Iterator[SSEEvent]:
        """The stream ended: process a last unterminated line; an undispatched event is dropped."""
        for line in self._complete_lines(final=True):
            event = self._line(line)
            if event is not None:
                yield event

    def _complete_lines(self, *, final: bool) -> list[bytes]:
        lines: list[bytes] = []
        buf = self._buffer
        start = 0
        i = 0
        n = len(buf)
        while i < n:
            byte = buf[i]
            if byte == 0x0A:  # LF
                lines.append(bytes(buf[start:i]))
                i += 1
                start = i
            elif byte == 0x0D:  # CR, maybe the first half of CRLF
                if i + 1 == n and not final:
                    break  # wait for the next chunk to tell CR from CRLF
                lines.append(bytes(buf[start:i]))
                i += 2 if i + 1 < n and buf[i + 1] == 0x0A else 1
                start = i
            else:
                i += 1
        if final and start < n:
            tail = bytes(buf[start:]).rstrip(b"\r")
            lines.append(tail)
            start = n
        del buf[:start]
        return lines

    def _line(self, raw: bytes) -> SSEEvent | None:
        if not raw:
            return self._dispatch()
        if raw.startswith(b":"):
            return None  # comment (keep-alive): ignored, not counted
        self._check(len(raw))
        self._event_bytes += len(raw)
        line = raw.decode("utf-8", errors="replace")
        name, colon, value = line.partition(":")
        if colon and value.startswith(" "):
            value = value[1:]
        if name == "event":
            self._type = value
        elif name == "data":
            self._data.append(value)
            self._has_data = True
        elif name == "id":
            if "\0" not in value:
                self._last_id = value
        elif name == "retry":
            if value.isdigit():
                self._retry = int(value)
        return None  # unknown field names are ignored

    def _dispatch(self) -> SSEEvent | None:
        event = None
        if self._has_data:
            event = SSEEvent(event=self._type or "message", data="\n".join(self._data), id=self._last_id,
                             retry=self._retry)
        self._type, self._data, self._has_data, self._retry, self._event_bytes = "", [], False, None, 0
        return event

    def _check(self, pending: int) -> None:
        size = self._event_bytes + pending
        if size > self.max_event_bytes:
            raise EventTooLarge(size, self.max_event_bytes)


@dataclass(frozen=True)
class StreamEnded:
    """Queue item: the pump's stream is over.

    :param pump: which stream.
    :param error: why it ended early (:class:`EventTooLarge`, a network error), or None at a clean end.
    """

    pump: StreamPump
    error: BaseException | None = None


class StreamPump:
    """Reads one streaming ``httpx2.Response`` of SSE on a daemon thread.

    Each event goes through *route*, which returns the item to queue (or None to drop the event). When
    the stream ends, for whatever reason, a :class:`StreamEnded` is queued and the response is closed.

    :param response: an open streaming response (``client.send(request, stream=True)``).
    :param max_event_bytes: the cap for one event.
    :param route: event -> queue item or None; runs on the pump thread.
    :param out: where items go; a bounded queue gives back-pressure instead of unbounded memory.
    :param name: thread name, for debugging.
    """

    #: how often a blocked ``put`` looks at the stop flag
    _PUT_POLL = 0.1

    def __init__(
        self,
        response: Any,
        *,
        max_event_bytes: int,
        route: Callable[[SSEEvent], object | None],
        out: queue.Queue[object],
        name: str,
    ) -> None:
        self.response = response
        self._parser = SSEParser(max_event_bytes)
        self._route = route
        self._out = out
        self._stop = threading.Event()
        self.finished = threading.Event()
        self._lock = threading.Lock()
        self._reading = True
        network_stream = response.extensions.get("network_stream")
        self._socket: socket.socket | None = None
        if network_stream is not None:
            self._socket = network_stream.get_extra_info("socket")
        self._thread = threading.Thread(target=self._run, name=name, daemon=True)

    def start(self) -> None:
        self._thread.start()

    def stop(self, join_timeout: float = 2.0) -> None:
        """Stop reading: shut the socket down (this wakes a blocked read), then join, bounded."""
        self._stop.set()
        with self._lock:
            # only while the pump still owns the connection: once closed it may serve another request
            if self._reading and self._socket is not None:
                try:
                    socket.socket.shutdown(self._socket, socket.SHUT_RDWR)
                except OSError:
                    pass
        if self._thread.is_alive() and threading.current_thread() is not self._thread:
            self._thread.join(join_timeout)

    def _run(self) -> None:
        error: BaseException | None = None
        try:
            for chunk in self.response.iter_bytes():
                for event in self._parser.feed(chunk):
                    self._deliver(event)
                if self._stop.is_set():
                    return
            for event in self._parser.finish():
                self._deliver(event)
        except BaseException as exc:  # noqa: BLE001 - every end of the stream must be reported
            error = None if self._stop.is_set() else exc
        finally:
            with self._lock:
                self._reading = False
            try:
                self.response.close()  # after EventTooLarge: drop the rest unread
            except Exception:  # noqa: BLE001 - closing a broken stream may fail; it is gone either way
                pass
            if not self._stop.is_set():
                self._put(StreamEnded(self, error))
            self.finished.set()

    def _deliver(self, event: SSEEvent) -> None:
        item = self._route(event)
        if item is not None:
            self._put(item)

    def _put(self, item: object) -> None:
        while not self._stop.is_set():
            try:
                self._out.put(item, timeout=self._PUT_POLL)
                return
            except queue.Full:
                continue
