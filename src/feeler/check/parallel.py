"""Sampled go cases on several sessions at once (``--workers N``): N server processes for a stdio target,
N concurrent sessions for an HTTP one.

Only the wire is parallel. Each worker thread owns one :class:`~feeler.session.Session` and does the
round trips (a thread waiting on a pipe or a socket releases the GIL, so the servers work side by side);
the main thread judges every answer in the order they come back, exactly as for one session
(:meth:`feeler.check.runner.Runner._judge`: counters, learning, checks, call log, inside
:func:`feeler._signals.held`). Workers also check liveness on their own session: after a call that got
no answer, an error or an ``isError`` result, and every ``alive_every`` calls. A worker whose server
exited opens a new session, within the run's ``max_restarts``.

Each stdio worker is a separate server process with its own state: use several workers for servers
whose tools do not depend on state kept in one process, or for HTTP servers that share it.
"""

from __future__ import annotations

import queue
import sys
import threading
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from feeler.errors import RemoteProtocolError, RequestTimeout, ServerExited, TargetError

if TYPE_CHECKING:
    from feeler.catalog import Tool
    from feeler.check.runner import Runner, ToolStats
    from feeler.session import Exchange, Session

__all__ = ["Workers", "wire_call"]

#: cases handed out ahead of the answers judged, per worker (bounds memory and the cases a stop loses)
AHEAD = 2
_DONE = object()


def wire_call(session: Session, tool: str, arguments: Any, timeout: float | None = None) -> tuple[Exchange | None, Exception | None]:
    """One ``tools/call``: the exchange, or the failure instead of an answer (feeler.errors)."""
    try:
        return session.call_tool(tool, arguments, timeout=timeout), None
    except RemoteProtocolError as exc:
        if exc.exchange is not None:
            return exc.exchange, None  # an answer came, with a wrong id: the envelope check judges it
        return None, exc
    except (RequestTimeout, ServerExited, TargetError) as exc:
        return None, exc


@dataclass
class _Done:
    """One call a worker made: the case, its answer or failure, and the liveness ping after it if any."""

    case: Any
    exchange: Any
    failure: Exception | None
    ping: Any = None
    ping_failure: Exception | None = None


class Workers:
    """*count* sessions on the runner's target, each driven by a daemon thread while cases are called."""

    def __init__(self, runner: Runner, count: int) -> None:
        self.runner = runner
        self.count = count
        self.sessions: list[Session | None] = []
        self._lock = threading.Lock()

    def _open(self) -> Session:
        from feeler.connect import open_session

        runner = self.runner
        options = {k: v for k, v in runner.session_options.items() if k != "log"}  # the message log: first session only
        session = open_session(runner.target, **options)
        if runner.report.catalog is not None:
            session.learn_tools(runner.report.catalog.tools)
        return session

    def close(self) -> None:
        """Close the workers' own sessions (worker 0's is the runner's, closed by the runner)."""
        for session in self.sessions[1:]:
            if session is not None:
                session.close()
        self.sessions = []

    def _restart(self, index: int) -> bool:
        runner = self.runner
        with self._lock:
            session = self.sessions[index]
            if session is not None:
                session.close()
            self.sessions[index] = None
            if runner.report.restarts >= runner.options.max_restarts:
                return False
            runner.report.restarts += 1
        try:
            self.sessions[index] = self._open()
        except TargetError:
            return False
        if index == 0:
            runner.session = self.sessions[0]  # worker 0 drives the runner's own session
        return True

    def _work(self, index: int, tool: str, jobs: queue.Queue[Any], done: queue.Queue[Any], stop: threading.Event) -> None:
        runner = self.runner
        since_ping = 0
        try:
            while not stop.is_set():
                case = jobs.get()
                if case is _DONE:
                    return
                session = self.sessions[index]
                if session is None:
                    done.put(_Done(case, None, ServerExited("the worker's server could not be restarted")))
                    return
                exchange, failure = wire_call(session, tool, case.arguments)
                item = _Done(case, exchange, failure)
                since_ping += 1
                troubled = failure is not None or exchange is None or exchange.error is not None or exchange.is_error_result
                if not isinstance(failure, ServerExited) and (troubled or since_ping >= max(1, runner.options.alive_every)):
                    since_ping = 0
                    try:
                        item.ping = session.ping(timeout=runner.options.alive_timeout)
                    except TargetError as exc:
                        item.ping_failure = exc
                done.put(item)
                if isinstance(failure, ServerExited) or isinstance(item.ping_failure, ServerExited):
                    if not self._restart(index):
                        return
        except BaseException as exc:  # noqa: BLE001 - handed to the main thread, which raises it
            done.put(exc)
        finally:
            done.put(_DONE)

    def call_cases(self, tool: Tool, stats: ToolStats, cases: Iterable[Any]) -> Iterator[tuple[Any, list[str] | None]]:
        """Call *cases* on the workers; yields ``(case, failed checks)`` as the answers are judged, and
        ``(case, None)`` when the tool cannot be called again (then it stops)."""
        from feeler.check.registry import CallContext

        runner = self.runner
        main = runner.open()  # worker 0 drives the runner's own session (it may have been restarted since)
        if self.sessions:
            self.sessions[0] = main
        while len(self.sessions) < self.count:
            self.sessions.append(main if not self.sessions else self._open())
        jobs: queue.Queue[Any] = queue.Queue()
        done: queue.Queue[Any] = queue.Queue()
        stop = threading.Event()
        threads = [
            threading.Thread(target=self._work, args=(i, tool.name, jobs, done, stop), daemon=True, name=f"feeler-worker-{i}")
            for i in range(self.count)
        ]
        for thread in threads:
            thread.start()
        source = iter(cases)
        in_flight, running, exhausted = 0, len(threads), False
        try:
            while running:
                while not exhausted and not stop.is_set() and in_flight < AHEAD * self.count:
                    case = next(source, _DONE)
                    if case is _DONE:
                        exhausted = True
                        break
                    jobs.put(case)
                    in_flight += 1
                if exhausted and not in_flight:
                    return  # every case handed out was judged (the finally ends the workers)
                item = done.get()
                if item is _DONE:  # a worker ended (its server could not be restarted): the others go on
                    running -= 1
                    continue
                if isinstance(item, BaseException):
                    raise item
                in_flight -= 1
                ctx = CallContext(item.case.kind, tool, runner.revision, runner.era, runner.settings, case=item.case)
                ctx.exchange, ctx.failure = item.exchange, item.failure
                if isinstance(item.failure, RequestTimeout):
                    stats.timeouts += 1
                runner.last_call = ctx
                failed = runner._judge(tool, stats, item.case, ctx)
                if item.ping is not None or item.ping_failure is not None:
                    alive = CallContext("alive", tool, runner.revision, runner.era, runner.settings, case=item.case)
                    alive.exchange, alive.failure = item.ping, item.ping_failure
                    failed = failed + runner._evaluate(alive)
                abandoned = stats.timeouts >= runner.options.max_timeouts_per_tool
                if abandoned and not stop.is_set():
                    stop.set()
                    exhausted = True
                yield item.case, failed
                if abandoned:
                    yield item.case, None
                    return
            yield None, None  # no worker left: the tool cannot be called any more
        finally:
            stop.set()
            for _ in threads:
                jobs.put(_DONE)
            # On a normal end wait for every worker (one may be inside a call until its timeout): worker 0
            # drives the runner's session, which must be free again. When unwinding (a stop signal, the
            # budget), wait briefly: the runner closes the sessions next, which ends the calls.
            unwinding = sys.exc_info()[0] is not None
            for thread in threads:
                thread.join(timeout=1.0 if unwinding else None)
