"""Shared fixtures for feeler's own tests: loopback ports, HTTP servers as subprocesses, stdio test servers,
and the guard that no process started by the suite outlives it.

Leftover guard: at import time this file puts a token unique to this run into ``os.environ``
(``FEELER_SUITE_TOKEN``); every process the suite starts inherits it (feeler's stdio transport passes
the environment on), even one later re-parented to pid 1. ``tests/test_no_leftover_processes.py``
(moved to the end of the run by :func:`pytest_collection_modifyitems`) scans ``/proc/*/environ`` for the
token; :func:`pytest_sessionfinish` scans once more after every fixture is torn down and fails the run
if anything is left.
"""

from __future__ import annotations

import contextlib
import os
import re
import signal
import socket
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest

from feeler.target import Target

TESTS = Path(__file__).parent
SERVERS = TESTS / "servers"
PY = sys.executable
#: how long an HTTP server subprocess may take to print its ready line (the SDK import is slow)
HTTP_START_TIMEOUT = 30.0
#: bounded wait for processes that were just signalled to disappear
LEFTOVER_GRACE = 3.0

TOKEN_NAME = "FEELER_SUITE_TOKEN"
if os.environ.get("PYTEST_XDIST_WORKER") and os.environ.get(TOKEN_NAME):
    SUITE_TOKEN = os.environ[TOKEN_NAME]  # an xdist worker keeps its controller's token: one run, one token
else:
    SUITE_TOKEN = f"{os.getpid()}-{time.time_ns()}"
    os.environ[TOKEN_NAME] = SUITE_TOKEN
#: pids of processes a live fixture owns on purpose (removed again at teardown)
LIVE_FIXTURE_PIDS: set[int] = set()

LEFTOVER_TEST_FILE = "test_no_leftover_processes.py"


# -- ports and HTTP servers ------------------------------------------------------------------------
def free_port() -> int:
    """A loopback port nothing listens on right now (the OS picks it; common practice)."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as sock:
        sock.bind(("127.0.0.1", 0))
        return int(sock.getsockname()[1])


@pytest.fixture
def unused_port() -> int:
    """A loopback port nobody listens on (for "unreachable URL" tests)."""
    return free_port()


def stop_process(proc: subprocess.Popen[bytes]) -> None:
    """End *proc* and its process group by pid: SIGTERM, bounded wait, SIGKILL, bounded wait."""
    for sig, wait in ((signal.SIGTERM, 3.0), (signal.SIGKILL, 5.0)):
        with contextlib.suppress(ProcessLookupError, PermissionError):
            os.killpg(proc.pid, sig)
        with contextlib.suppress(subprocess.TimeoutExpired):
            proc.wait(wait)
            break
    # The group may hold children of the server even after the leader exited.
    with contextlib.suppress(ProcessLookupError, PermissionError):
        os.killpg(proc.pid, signal.SIGKILL)


@contextlib.contextmanager
def http_server(argv: list[str], env: dict[str, str] | None = None) -> Iterator[str]:
    """Run an HTTP server subprocess that prints ``ready on URL`` to stderr; yield the URL.

    stderr goes to a temporary file (a full pipe could block the server); the ready line is polled for
    with a deadline. The process runs in its own process group and is ended by pid at exit.
    """
    with tempfile.TemporaryFile() as log:
        proc = subprocess.Popen(
            argv, stdin=subprocess.DEVNULL, stdout=log, stderr=log,
            env={**os.environ, **(env or {})}, start_new_session=True,
        )
        LIVE_FIXTURE_PIDS.add(proc.pid)
        try:
            deadline = time.monotonic() + HTTP_START_TIMEOUT
            url = None
            while url is None:  # bounded by the deadline
                log.seek(0)
                text = log.read().decode("utf-8", "replace")
                found = re.search(r"ready on (http://127\.0\.0\.1:\d+/\S*)", text)
                if found:
                    url = found.group(1)
                    break
                if proc.poll() is not None:
                    pytest.fail(f"{argv}: exited ({proc.returncode}) before listening: {text[-1500:]}")
                if time.monotonic() > deadline:
                    pytest.fail(f"{argv}: no ready line within {HTTP_START_TIMEOUT:g}s: {text[-1500:]}")
                time.sleep(0.05)
            yield url
        finally:
            stop_process(proc)
            LIVE_FIXTURE_PIDS.discard(proc.pid)


@pytest.fixture(scope="module")
def demo_http_url() -> Iterator[str]:
    """The demo served over Streamable HTTP by uvicorn on 127.0.0.1 (one subprocess per test module)."""
    with http_server([PY, "-m", "feeler.demo", "--http", "--port", "0"]) as url:
        yield url


@pytest.fixture(scope="module")
def reference_http_url() -> Iterator[str]:
    """tests/servers/clean_reference.py over Streamable HTTP on 127.0.0.1 (one subprocess per test module)."""
    with http_server([PY, str(SERVERS / "clean_reference.py"), "--http", "--port", "0"]) as url:
        yield url


# -- stdio test servers ----------------------------------------------------------------------------
@pytest.fixture(scope="session")
def server_target() -> Callable[..., Target]:
    """``server_target("hangs_on_call", env={...})``: a stdio Target for ``tests/servers/<name>.py``."""

    def make(name: str, *args: str, env: dict[str, str] | None = None) -> Target:
        return Target(kind="stdio", command=(PY, str(SERVERS / f"{name}.py"), *args), env=dict(env or {}))

    return make


@pytest.fixture(scope="session")
def demo_stdio() -> Target:
    """The demo as a stdio subprocess target (``python -m feeler.demo``)."""
    return Target(kind="stdio", command=(PY, "-m", "feeler.demo"))


# -- leftover processes ----------------------------------------------------------------------------
def _read(path: str) -> bytes:
    try:
        with open(path, "rb") as handle:
            return handle.read()
    except OSError:  # gone meanwhile, or not ours
        return b""


def suite_processes(exclude: set[int] | frozenset[int] = frozenset()) -> dict[int, tuple[int, str]]:
    """Live (non-zombie) processes that carry this run's token: pid -> (parent pid, command line)."""
    marker = f"{TOKEN_NAME}={SUITE_TOKEN}".encode()
    me = os.getpid()
    found: dict[int, tuple[int, str]] = {}
    for entry in os.listdir("/proc"):
        if not entry.isdigit() or int(entry) == me or int(entry) in exclude:
            continue
        if marker not in _read(f"/proc/{entry}/environ").split(b"\0"):
            continue
        fields = _read(f"/proc/{entry}/stat").rpartition(b")")[2].split()
        if len(fields) < 2 or fields[0] in (b"Z", b"X"):
            continue  # gone, or a zombie: it has exited and only waits to be reaped
        cmdline = _read(f"/proc/{entry}/cmdline").replace(b"\0", b" ").decode("utf-8", "replace").strip()
        found[int(entry)] = (int(fields[1]), cmdline[:200])
    return found


def descendants_of(root: int, procs: dict[int, tuple[int, str]]) -> dict[int, tuple[int, str]]:
    """The entries of *procs* whose parent chain leads to *root* (bounded by the table size)."""
    out = {}
    for pid in procs:
        parent, steps = procs[pid][0], 0
        while parent in procs and parent != root and steps < len(procs):
            parent, steps = procs[parent][0], steps + 1
        if parent == root:
            out[pid] = procs[pid]
    return out


def _xdist_workers(procs: dict[int, tuple[int, str]]) -> set[int]:
    """xdist workers are our direct children started by execnet (``exec(eval(sys.stdin.readline()))``)."""
    return {pid for pid, (ppid, cmd) in procs.items() if ppid == os.getpid() and "sys.stdin.readline" in cmd}


def leftovers(*, only_descendants: bool = False, grace: float = LEFTOVER_GRACE) -> list[str]:
    """Processes of this run still alive after a bounded grace wait, as ``pid: command line`` lines.

    :param only_descendants: count only descendants of this process (an xdist worker checks its own).
    """
    deadline = time.monotonic() + grace
    while True:
        procs = suite_processes(LIVE_FIXTURE_PIDS)
        workers = _xdist_workers(procs)
        left = {pid: info for pid, info in procs.items() if pid not in workers}
        if only_descendants:
            left = descendants_of(os.getpid(), left)
        if not left or time.monotonic() > deadline:
            return [f"{pid}: {cmd}" for pid, (_, cmd) in sorted(left.items())]
        time.sleep(0.1)


def pytest_report_header(config: pytest.Config) -> str:
    """The versions of the outside references this run judged against, on the first lines of the log
    (feeler supports the newest hypothesis: the CI log shows which one it ran on)."""
    from importlib.metadata import PackageNotFoundError, version

    def ver(name: str) -> str:
        try:
            return version(name)
        except PackageNotFoundError:
            return "absent"

    return "feeler's references: " + ", ".join(f"{n} {ver(n)}" for n in ("hypothesis", "jsonschema", "mcp", "mcp-types", "referencing"))


def pytest_collection_modifyitems(session: pytest.Session, config: pytest.Config, items: list[pytest.Item]) -> None:
    """Run the leftover-process test last."""
    last = [item for item in items if item.path.name == LEFTOVER_TEST_FILE]
    items[:] = [item for item in items if item.path.name != LEFTOVER_TEST_FILE] + last


@pytest.hookimpl(trylast=True)
def pytest_sessionfinish(session: pytest.Session, exitstatus: int) -> None:
    """After every fixture is torn down: nothing started by the suite may still run (issue 2 acceptance).

    Only in the process that owns the run (an xdist worker's siblings may still be busy).
    """
    if os.environ.get("PYTEST_XDIST_WORKER") or not os.path.isdir("/proc"):
        return
    left = leftovers()
    if left:
        text = "processes started by the test suite are still running:\n  " + "\n  ".join(left)
        reporter = session.config.pluginmanager.get_plugin("terminalreporter")
        if reporter is not None:
            reporter.write_line("feeler: " + text, red=True)
        else:
            print(text, file=sys.stderr)
        session.exitstatus = pytest.ExitCode.TESTS_FAILED


class _Helpers:
    """What test modules need from this file, handed out by the ``suite`` fixture.

    (Test modules cannot ``import conftest``: tests/transport has its own conftest module of that name.)
    """

    free_port = staticmethod(free_port)
    http_server = staticmethod(http_server)
    stop_process = staticmethod(stop_process)
    suite_processes = staticmethod(suite_processes)
    leftovers = staticmethod(leftovers)
    servers = SERVERS
    python = PY


@pytest.fixture(scope="session")
def suite() -> type[_Helpers]:
    """Helpers shared by the test modules (ports, HTTP servers, process scans)."""
    return _Helpers
