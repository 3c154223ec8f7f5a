"""In-process: a server object of the official ``mcp`` SDK, served on a private event loop thread.

The raw text feeler sends is fed, line by line, to the SDK's own stdio server code
(``mcp.server.stdio.stdio_server`` given in-memory streams), so the server parses exactly what it would
parse from a pipe; its answers come back as the lines it would have printed. No process is started,
which makes this the fast path for Python server authors (``feeler check my_pkg.server:app``).
"""

from __future__ import annotations

import importlib
import os
import queue
import sys
from collections.abc import Mapping
from typing import Any

from feeler.errors import ConnectError, RequestTimeout, ResponseTooLarge, ServerExited, TargetError, UsageError
from feeler.transport.base import DEFAULT_MAX_MESSAGE_BYTES, Inbound, Transport

__all__ = ["InProcessTransport", "load_server_object"]

_EXITED = object()


def load_server_object(spec: str, cwd: str | None = None) -> Any:
    """Import ``module:attribute`` and return the object; errors say which part was wrong.

    With *cwd*, the module is imported from that folder: it comes first on ``sys.path`` and is the working
    folder while the module is imported (feeler's own working folder is restored afterwards).
    """
    module_name, sep, attr = spec.partition(":")
    if not sep or not module_name or not attr:
        raise UsageError(f"{spec!r} is not module:attribute (for example my_package.server:app)")
    if "." not in sys.path and "" not in sys.path:
        sys.path.insert(0, "")  # like `python -m`: modules in the working directory are importable
    if cwd is not None:
        folder = os.path.abspath(cwd)
        if not os.path.isdir(folder):
            raise UsageError(f"{spec}: --cwd {cwd!r} is not a folder")
        if folder not in sys.path:
            sys.path.insert(0, folder)
        before = os.getcwd()
        os.chdir(folder)
        try:
            return load_server_object(spec)
        finally:
            os.chdir(before)
    try:
        module = importlib.import_module(module_name)
    except ModuleNotFoundError as exc:
        raise UsageError(f"{spec}: cannot import module {module_name!r} ({exc}); check the name and your PYTHONPATH") from exc
    except Exception as exc:  # the user's module raised while importing
        raise ConnectError(f"{spec}: importing {module_name!r} failed: {type(exc).__name__}: {exc}") from exc
    obj: Any = module
    for part in attr.split("."):
        try:
            obj = getattr(obj, part)
        except AttributeError as exc:
            raise UsageError(f"{spec}: module {module_name!r} has no attribute {attr!r}") from exc
    return obj


def _lowlevel(server: Any, spec: str) -> Any:
    low = getattr(server, "_lowlevel_server", server)
    if not (hasattr(low, "run") and hasattr(low, "create_initialization_options")):
        raise UsageError(
            f"{spec}: {type(server).__name__} is not a server of the official mcp SDK "
            "(expected an mcp.server.mcpserver.MCPServer or mcp.server.lowlevel.Server)"
        )
    return low


class _Lines:
    """Async iterator of the lines feeler sent (the server's "stdin")."""

    def __init__(self, receive_stream: Any) -> None:
        self._stream = receive_stream

    def __aiter__(self) -> _Lines:
        return self

    async def __anext__(self) -> str:
        import anyio

        try:
            return await self._stream.receive()
        except (anyio.EndOfStream, anyio.ClosedResourceError):
            raise StopAsyncIteration from None


class _Sink:
    """The server's "stdout": every line it writes lands in a thread-safe queue."""

    def __init__(self, out: queue.SimpleQueue[Any]) -> None:
        self._out = out
        self._partial = ""

    async def write(self, text: str) -> None:
        self._partial += text
        while "\n" in self._partial:
            line, self._partial = self._partial.split("\n", 1)
            self._out.put(line)

    async def flush(self) -> None:
        return None


class InProcessTransport(Transport):
    """Serve ``module:attribute`` (an SDK server object) in this process."""

    kind = "inprocess"

    def __init__(self, target: str, spec: str, *, env: Mapping[str, str] | None = None, cwd: str | None = None,
                 max_message_bytes: int = DEFAULT_MAX_MESSAGE_BYTES) -> None:
        super().__init__(target, max_message_bytes=max_message_bytes)
        self.spec = spec
        #: set in this process's environment while the session is open (the server runs here)
        self.env = dict(env or {})
        self.cwd = cwd
        self._saved_env: dict[str, str | None] | None = None
        self._out: queue.SimpleQueue[Any] = queue.SimpleQueue()
        self._portal_cm: Any = None
        self._portal: Any = None
        self._send_stream: Any = None
        self._future: Any = None
        self._failure: str | None = None

    def open(self, timeout: float) -> None:
        try:
            import anyio
            from anyio.from_thread import start_blocking_portal
            from mcp.server.stdio import stdio_server
        except ImportError as exc:
            raise UsageError(
                f"{self.target}: in-process targets need the official SDK: python -m pip install 'feeler[demo]'"
            ) from exc
        self._set_env()
        try:
            low = _lowlevel(load_server_object(self.spec, self.cwd), self.spec)
        except BaseException:
            self._restore_env()
            raise
        self._portal_cm = start_blocking_portal()
        self._portal = self._portal_cm.__enter__()
        send_stream, receive_stream = self._portal.call(_make_stream, anyio)
        self._send_stream = send_stream
        sink = _Sink(self._out)

        async def serve() -> None:
            async with stdio_server(stdin=_Lines(receive_stream), stdout=sink) as (read, write):  # type: ignore[arg-type]
                await low.run(read, write, low.create_initialization_options())

        self._future = self._portal.start_task_soon(serve)
        self._future.add_done_callback(self._on_exit)

    def _set_env(self) -> None:
        if self.env and self._saved_env is None:
            self._saved_env = {name: os.environ.get(name) for name in self.env}
            os.environ.update(self.env)

    def _restore_env(self) -> None:
        saved, self._saved_env = self._saved_env, None
        for name, value in (saved or {}).items():
            if value is None:
                os.environ.pop(name, None)
            else:
                os.environ[name] = value

    def _on_exit(self, future: Any) -> None:
        if future.cancelled():
            self._failure = "the server task was cancelled"
        elif future.exception() is not None:
            exc = future.exception()
            self._failure = f"the server raised {type(exc).__name__}: {exc}"
        else:
            self._failure = "the server stopped"
        self._out.put(_EXITED)

    def send(self, text: str, *, headers: Mapping[str, str] | None = None, timeout: float = 30.0) -> None:
        if self._portal is None:
            raise TargetError("the transport is not open", target=self.target)
        if self._failure is not None:
            raise ServerExited(self._failure, target=self.target)
        for line in text.split("\n"):
            if line.strip():
                self._portal.call(self._send_stream.send, line)

    def receive(self, timeout: float) -> Inbound:
        if self._portal is None:
            raise TargetError("the transport is not open", target=self.target)
        try:
            item = self._out.get(timeout=timeout)
        except queue.Empty:
            raise RequestTimeout(f"no answer within {timeout:g}s", target=self.target) from None
        if item is _EXITED:
            self._out.put(_EXITED)  # every later receive sees it too
            raise ServerExited(self._failure or "the server stopped", target=self.target)
        if len(item.encode("utf-8")) > self.max_message_bytes:
            raise ResponseTooLarge(
                f"an answer exceeded the size cap of {self.max_message_bytes:,} bytes (raise it with --max-message-bytes)",
                target=self.target,
            )
        return Inbound(item)

    def alive(self) -> bool:
        return self._failure is None and self._portal is not None

    def diagnostics(self) -> str:
        return self._failure or ""

    def close(self) -> None:
        portal, self._portal = self._portal, None
        if portal is None:
            self._restore_env()
            return
        try:
            portal.call(self._send_stream.aclose)
        except Exception:
            pass
        if self._future is not None:
            try:
                self._future.result(timeout=5.0)
            except Exception:
                pass
            if not self._future.done():
                try:
                    portal.call(portal.stop, True)  # cancel a server that does not stop on EOF
                except Exception:
                    pass
        try:
            self._portal_cm.__exit__(None, None, None)
        except Exception:
            pass
        self._restore_env()


def _make_stream(anyio: Any) -> Any:
    return anyio.create_memory_object_stream(max_buffer_size=1024)
