"""The one small interface every transport implements.

A transport moves raw message *text* and nothing else: it never parses JSON-RPC, so a tester can send
what a polite client never would, and every byte that crosses the wire can be recorded. The session
(:mod:`feeler.session`) owns all protocol knowledge, including the HTTP headers a message needs.

Life cycle: ``open()`` once, then any number of ``send()`` / ``receive()``, then ``close()`` (idempotent;
a transport is also a context manager).
"""

from __future__ import annotations

import time
from abc import ABC, abstractmethod
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import TracebackType

__all__ = ["DEFAULT_MAX_MESSAGE_BYTES", "Inbound", "Transport"]

#: Default cap on one answer: larger answers end the call with ResponseTooLarge.
DEFAULT_MAX_MESSAGE_BYTES = 16 * 1024 * 1024


@dataclass(frozen=True)
class Inbound:
    """One message as it arrived.

    :param text: the raw text of one message (one stdio line, one SSE ``data`` payload, one JSON body).
        Empty when an HTTP answer carried no body.
    :param at: ``time.monotonic()`` when it was read.
    :param http_status: the HTTP status of the answer that carried it (None on stdio and in-process).
    :param headers: selected HTTP answer headers (lower-case names), e.g. ``content-type``.
    :param not_utf8: the bytes were not UTF-8 (``text`` has U+FFFD in place of each bad byte).
    """

    text: str
    at: float = field(default_factory=time.monotonic)
    http_status: int | None = None
    headers: Mapping[str, str] = field(default_factory=dict)
    not_utf8: bool = False


class Transport(ABC):
    """Moves raw messages between feeler and one server.

    :param target: the display name of the target, used in every error message.
    :param max_message_bytes: answers larger than this raise :class:`~feeler.errors.ResponseTooLarge`.
    """

    #: short name of the transport kind, e.g. ``"stdio"``
    kind: str = "abstract"
    #: whether ``send(headers=...)`` means anything (HTTP); the session skips computing them otherwise
    takes_headers: bool = False

    def __init__(self, target: str, *, max_message_bytes: int = DEFAULT_MAX_MESSAGE_BYTES) -> None:
        self.target = target
        self.max_message_bytes = max_message_bytes

    @abstractmethod
    def open(self, timeout: float) -> None:
        """Start or connect to the server. Raises :class:`~feeler.errors.ConnectError`."""

    @abstractmethod
    def send(self, text: str, *, headers: Mapping[str, str] | None = None, timeout: float = 30.0) -> None:
        """Send one raw message.

        :param text: exactly what goes on the wire (one line on stdio; a POST body over HTTP).
        :param headers: HTTP headers for this message (``MCP-Protocol-Version``, ``Mcp-Method``, ...);
            ignored by transports without headers.
        :param timeout: how long sending may block (HTTP: until the answer's headers arrive).
        """

    @abstractmethod
    def receive(self, timeout: float) -> Inbound:
        """The next message from the server.

        Raises :class:`~feeler.errors.RequestTimeout` when nothing arrives within *timeout* seconds,
        :class:`~feeler.errors.ServerExited` when the server is gone, and
        :class:`~feeler.errors.ResponseTooLarge` for an answer over the cap (the rest of it is discarded).
        """

    @abstractmethod
    def close(self) -> None:
        """End the connection and, for a process, the process. Safe to call twice."""

    def set_protocol_version(self, version: str | None) -> None:  # noqa: B027 - optional hook
        """Tell the transport the negotiated revision (HTTP uses it for the session's DELETE)."""

    def diagnostics(self) -> str:
        """What the transport knows that may explain a failure (stderr tail, HTTP status...)."""
        return ""

    def alive(self) -> bool:
        """False once the server is known to be gone (a process that exited)."""
        return True

    def __enter__(self) -> Transport:
        return self

    def __exit__(
        self, exc_type: type[BaseException] | None, exc: BaseException | None, tb: TracebackType | None
    ) -> None:
        self.close()
