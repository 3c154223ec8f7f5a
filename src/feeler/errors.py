"""Every exception feeler raises on purpose.

The tree separates *our* side (bad input from the user) from the *server's* side (what the target did)::

    FeelerError
     ├── UsageError                 bad option, config value, target spec or file given by the user
     ├── SchemaProblem              a tool's schema cannot be used (invalid, unknown dialect, remote $ref)
     ├── BaselineError              a baseline file is missing, corrupt or hand-edited
     └── TargetError                the server could not be reached or did something a client cannot work with
          ├── ConnectError          could not start / reach the server
          ├── ServerExited          the server process exited (exit code and stderr tail attached)
          ├── RequestTimeout        no answer within the per-request timeout
          ├── ResponseTooLarge      an answer bigger than the configured cap
          ├── HandshakeError        neither era could be negotiated
          └── RemoteProtocolError   an answer that is not JSON-RPC, or that cannot be matched to our request

Messages say what was wrong, for which target, and what to try.
"""

from __future__ import annotations

__all__ = [
    "BaselineError",
    "ConnectError",
    "FeelerError",
    "HandshakeError",
    "RemoteProtocolError",
    "RequestTimeout",
    "ResponseTooLarge",
    "SchemaProblem",
    "ServerExited",
    "TargetError",
    "UsageError",
]


class FeelerError(Exception):
    """Root of every error feeler raises on purpose."""


class UsageError(FeelerError):
    """The user asked for something feeler cannot do: fix the option, file or target named."""


class SchemaProblem(FeelerError):
    """A JSON Schema that cannot be used for generation or diffing.

    :param reason: a short machine-readable reason (``invalid-schema``, ``unknown-dialect``,
        ``remote-ref``, ``unresolvable-ref``, ``unsatisfiable``).
    """

    def __init__(self, message: str, *, reason: str = "invalid-schema") -> None:
        super().__init__(message)
        self.reason = reason


class BaselineError(FeelerError):
    """A baseline file cannot be used as it is."""


class TargetError(FeelerError):
    """The server (the target) failed in a way a client cannot work around.

    :param target: the target's display name, so every message names it.
    """

    def __init__(self, message: str, *, target: str | None = None) -> None:
        super().__init__(message)
        self.target = target

    def __str__(self) -> str:
        text = super().__str__()
        return f"{self.target}: {text}" if self.target else text


class ConnectError(TargetError):
    """The server could not be started or reached."""


class ServerExited(TargetError):
    """The server process ended.

    :param returncode: the exit status (negative: killed by that signal), or None if unknown.
    :param stderr_tail: the last lines the server wrote to stderr.
    """

    def __init__(
        self,
        message: str,
        *,
        target: str | None = None,
        returncode: int | None = None,
        stderr_tail: str = "",
    ) -> None:
        super().__init__(message, target=target)
        self.returncode = returncode
        self.stderr_tail = stderr_tail


class RequestTimeout(TargetError):
    """No answer arrived within the per-request timeout."""


class ResponseTooLarge(TargetError):
    """An answer exceeded the configured size cap; it was discarded instead of read into memory."""


class HandshakeError(TargetError):
    """No protocol era or revision could be agreed with the server.

    :ivar http_status: the HTTP status of the refusal, when the target is an HTTP URL.
    """

    http_status: int | None = None


class RemoteProtocolError(TargetError):
    """The server sent something that breaks JSON-RPC in a way the session cannot recover from.

    :ivar exchange: the :class:`~feeler.session.Exchange` it happened in, when there is one.
    """

    exchange: object = None
