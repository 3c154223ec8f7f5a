"""StdioTransport on its own: raw lines in and out, stderr tail, size cap, and shutdown that leaves nothing.

Outside references: MCP 2025-11-25 basic/transports ("stdio": newline-delimited messages, no embedded
newlines, stderr is for logging) and basic/lifecycle ("stdio" shutdown: close stdin, wait, SIGTERM, SIGKILL).
"""

from __future__ import annotations

import json
import os
import sys
import textwrap
import time
from pathlib import Path

import pytest

from feeler.errors import ConnectError, RequestTimeout, ResponseTooLarge, ServerExited
from feeler.transport.stdio import StdioTransport

SERVERS = Path(__file__).parent / "servers"
PY = sys.executable


def _alive(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/stat", "rb") as handle:
            return handle.read().rpartition(b")")[2].split()[0] not in (b"Z", b"X")
    except OSError:
        return False


def test_a_round_trip_of_raw_lines() -> None:
    transport = StdioTransport("legacy", [PY, str(SERVERS / "legacy_only.py")])
    with transport:
        transport.open(5)
        transport.send('{"jsonrpc":"2.0","id":"a","method":"ping"}')
        inbound = transport.receive(5)
        # MCP 2025-11-25 basic/utilities/ping: the answer is an empty result with the same id
        assert json.loads(inbound.text) == {"jsonrpc": "2.0", "id": "a", "result": {}}
        assert inbound.http_status is None and inbound.at <= time.monotonic()
        with pytest.raises(RequestTimeout):  # nothing more is coming
            transport.receive(0.2)
        assert transport.alive()


def test_a_missing_command_is_a_connect_error() -> None:
    transport = StdioTransport("nope", ["feeler-no-such-command-4711", "--x"])
    with pytest.raises(ConnectError) as caught:
        transport.open(5)
    assert "\n" not in str(caught.value) and "feeler-no-such-command-4711" in str(caught.value)
    assert "PATH" in str(caught.value)


def test_exit_is_noticed_with_code_and_stderr_tail() -> None:
    transport = StdioTransport("exits", [PY, str(SERVERS / "exits_at_start.py")])
    try:
        transport.open(5)
        started = time.monotonic()
        with pytest.raises(ServerExited) as caught:
            transport.receive(10)
        assert time.monotonic() - started < 5  # noticed at once, not at the timeout
        assert caught.value.returncode == 2
        assert "harbour.toml" in caught.value.stderr_tail and "harbour.toml" in str(caught.value)
        assert not transport.alive()
    finally:
        transport.close()


def test_an_oversized_line_is_discarded_and_the_next_one_read(tmp_path: Path) -> None:
    script = tmp_path / "big.py"
    script.write_text('import sys\nsys.stdout.write("x" * 300000 + "\\n" + "{}\\n")\nsys.stdout.flush()\nsys.stdin.read()\n')
    transport = StdioTransport("big", [PY, str(script)], max_message_bytes=100_000)
    with transport:
        transport.open(5)
        with pytest.raises(ResponseTooLarge) as caught:
            transport.receive(5)
        assert "100,000 bytes" in str(caught.value)
        assert transport.receive(5).text == "{}"


STUBBORN = textwrap.dedent(
    """
    import os, signal, subprocess, sys, time
    signal.signal(signal.SIGTERM, signal.SIG_IGN)
    child = subprocess.Popen([sys.executable, "-c", "import signal, time; signal.signal(signal.SIGTERM, signal.SIG_IGN); time.sleep(60)"])
    print(child.pid, flush=True)
    sys.stdin.read()          # EOF does not end us ...
    time.sleep(60)            # ... and SIGTERM is ignored: only SIGKILL will
    """
)


def test_close_ends_a_stubborn_server_and_its_children(tmp_path: Path) -> None:
    script = tmp_path / "stubborn.py"
    script.write_text(STUBBORN)
    transport = StdioTransport("stubborn", [PY, str(script)], shutdown_grace=0.3)
    transport.open(5)
    pid = transport.pid
    assert pid is not None
    child = int(transport.receive(10).text)
    assert _alive(pid) and _alive(child)
    started = time.monotonic()
    transport.close()
    # MCP 2025-11-25 basic/lifecycle (stdio shutdown): stdin closed, SIGTERM, then SIGKILL to the process group
    assert time.monotonic() - started < 5
    deadline = time.monotonic() + 3
    while (_alive(pid) or _alive(child)) and time.monotonic() < deadline:
        time.sleep(0.05)
    assert not _alive(pid) and not _alive(child)
    transport.close()  # a second close is harmless


def test_a_well_behaved_server_ends_on_stdin_eof() -> None:
    transport = StdioTransport("legacy", [PY, str(SERVERS / "legacy_only.py")], shutdown_grace=5)
    transport.open(5)
    proc = transport.proc
    started = time.monotonic()
    transport.close()
    assert proc is not None and proc.returncode == 0  # exited by itself, no signal needed
    assert time.monotonic() - started < 4


def test_environment_and_working_directory_reach_the_server(tmp_path: Path) -> None:
    script = tmp_path / "env.py"
    script.write_text('import json, os\nprint(json.dumps([os.environ.get("FEELER_X"), os.getcwd()]), flush=True)\n')
    with StdioTransport("env", [PY, str(script)], env={"FEELER_X": "42"}, cwd=str(tmp_path)) as transport:
        transport.open(5)
        assert json.loads(transport.receive(5).text) == ["42", os.path.realpath(tmp_path)]
