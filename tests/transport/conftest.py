"""Loopback HTTP servers for the transport tests: one subprocess per mode, shared by a module.

Each server is ``tests/transport/_http_apps.py`` run with uvicorn on 127.0.0.1 in its own process group;
teardown ends it by pid and process group (SIGTERM, then SIGKILL: uvicorn waits for open streams).
"""

from __future__ import annotations

import contextlib
import os
import signal
import socket
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest

APPS = Path(__file__).with_name("_http_apps.py")
#: the token the "bearer" server accepts (a test value, not a secret)
TEST_TOKEN = "transport-test-token-7f3a"
_START_TIMEOUT = 20.0


def free_port() -> int:
    """A port nothing listens on right now (the OS picks it)."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as sock:
        sock.bind(("127.0.0.1", 0))
        return int(sock.getsockname()[1])


def _stop(proc: subprocess.Popen[bytes]) -> None:
    for sig, wait in ((signal.SIGTERM, 2.0), (signal.SIGKILL, 5.0)):
        if proc.poll() is not None:
            return
        with contextlib.suppress(ProcessLookupError):
            os.killpg(proc.pid, sig)
        with contextlib.suppress(subprocess.TimeoutExpired):
            proc.wait(wait)


@contextlib.contextmanager
def serve(mode: str) -> Iterator[str]:
    """Run the *mode* server; yield its base URL ``http://127.0.0.1:PORT``."""
    port = free_port()
    env = dict(os.environ, HTTP_APPS_TOKEN=TEST_TOKEN)
    with tempfile.TemporaryFile() as log:
        proc = subprocess.Popen(
            [sys.executable, str(APPS), "--port", str(port), "--mode", mode],
            stdin=subprocess.DEVNULL, stdout=log, stderr=log, env=env, start_new_session=True,
        )
        try:
            deadline = time.monotonic() + _START_TIMEOUT
            while True:  # bounded by the deadline
                if proc.poll() is not None:
                    log.seek(0)
                    pytest.fail(f"the {mode} test server exited ({proc.returncode}): {log.read().decode()[-2000:]}")
                try:
                    socket.create_connection(("127.0.0.1", port), timeout=0.2).close()
                    break
                except OSError:
                    if time.monotonic() > deadline:
                        pytest.fail(f"the {mode} test server did not listen on port {port} within {_START_TIMEOUT}s")
                    time.sleep(0.05)
            yield f"http://127.0.0.1:{port}"
        finally:
            _stop(proc)


def _server_fixture(mode: str) -> Callable[[], Iterator[str]]:
    @pytest.fixture(scope="module")
    def fixture() -> Iterator[str]:
        with serve(mode) as base:
            yield base

    return fixture


stateful_sse_server = _server_fixture("stateful-sse")
stateful_json_server = _server_fixture("stateful-json")
stateless_server = _server_fixture("stateless")
legacy_sse_server = _server_fixture("legacy-sse")
bearer_server = _server_fixture("bearer")
odd_sse_server = _server_fixture("odd-sse")


@pytest.fixture
def bearer_token() -> str:
    """The token the ``bearer`` server accepts."""
    return TEST_TOKEN


@pytest.fixture
def unused_port() -> int:
    """A loopback port with nothing listening."""
    return free_port()
