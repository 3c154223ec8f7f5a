"""The fault suite: a real ``feeler check`` subprocess against each misbehaving server of tests/servers/.

Each case must end within its bound with a finding (exit 1) or a clear one-line error (exit 2), never a
traceback (exit 3) or a hang, the run must go on with the healthy ``echo`` tool where it can, and after
each case no process of the case may be left running (found by an environment marker, see _procs.py).
References: JSON-RPC 2.0 section 5 (one response object: "jsonrpc" exactly "2.0", exactly one of result
and error), MCP 2025-11-25 basic/transports "stdio" (stdout carries only MCP messages, newline-delimited
UTF-8) and basic/lifecycle "Shutdown" (close stdin, SIGTERM, SIGKILL), POSIX signals (exit 128+N).
"""

from __future__ import annotations

import os
import re
import signal
import time
import uuid
from dataclasses import dataclass, field
from pathlib import Path

import pytest
from _procs import MARKER, kill_all, left_running, marked, server, start_feeler

pytestmark = pytest.mark.skipif(not os.path.isdir("/proc"), reason="needs /proc (Linux) to find leftovers")

QUICK = ["check", "--timeout", "2", "--samples", "0", "--no-probes", "--replay-dir", "replays"]


@dataclass
class Fault:
    server: str
    codes: tuple[int, ...]
    shows: str  # a substring of stdout+stderr that names the fault
    check: str | None = None  # when set, ``shows`` must be on a "FINDING [check]" line
    echo_tested: bool = True  # the healthy tool was still tested
    env: dict[str, str] = field(default_factory=dict)
    extra: tuple[str, ...] = ()
    bound: float = 90.0  # seconds the whole feeler process may take; past it the case fails and is killed


FAULTS = [
    Fault("closes_stdout", (1,), "the server closed its stdout", check="no_crash"),
    Fault("floods_stderr", (0,), "0 findings", env={"FEELER_FLOOD_MIB": "4"}),
    Fault("answers_twice", (1,), "which feeler never sent", check="server_alive"),
    # MCP basic/transports "stdio": messages are UTF-8; the answer is still read, the run goes on
    Fault("invalid_utf8", (1,), "a message that is not UTF-8 (bad bytes shown as U+FFFD): 'content\"", check="envelope"),
    Fault("sometimes_slow", (1,), "no answer within 2s", check="no_crash", env={"FEELER_SLEEP_S": "3"}),
    Fault("wrong_jsonrpc_version", (1,), "\"jsonrpc\" is '1.0', not \"2.0\"", check="envelope"),
    Fault("result_and_error", (1,), "exactly one of result and error", check="envelope"),
    Fault("no_newline_then_hang", (1,), "no answer within 1s", check="no_crash", extra=("--timeout", "1")),
    # MCP basic/transports "stdio": the server MUST NOT write anything to stdout that is not an MCP message
    Fault("banner_line", (1,), "a message that is not JSON while connecting: 'banner_line server 1.0 starting",
          check="envelope"),
    Fault("cursor_loops", (2,), "tools/list: more than 1000 pages; giving up", echo_tested=False),
    Fault("string_tool_entry", (2,), "tools[0] in the list the server sent is not a JSON object ('lookup')",
          echo_tested=False),
    Fault("huge_answer", (1,), "exceeded the size cap", check="no_crash", env={"FEELER_HUGE_MIB": "50"},
          echo_tested=False, extra=("--max-message-bytes", "1048576")),
    Fault("ignores_sigterm", (0,), "0 findings", env={"FEELER_LINGER_S": "60"}),
    Fault("oversized_schemas", (1,), "nests more than 64 levels deep", check="schema_usable",
          extra=("--max-message-bytes", "16777216")),
    Fault("many_tools", (0,), "echo_1999", echo_tested=False, extra=("--include", "echo_1999")),
]


@pytest.mark.parametrize("fault", FAULTS, ids=[f.server for f in FAULTS])
def test_fault_is_reported_and_nothing_is_left(fault: Fault, tmp_path: Path) -> None:
    """A real ``feeler check`` process per case, bounded by ``fault.bound`` (past it the test fails and the
    process group and every marked process are killed); then nothing of the case may still run."""
    run = start_feeler(tmp_path, *QUICK, *fault.extra, "--", *server(fault.server), env=fault.env)
    try:
        code = run.wait(fault.bound)  # kills the group and fails the test past the bound
        out, err = run.stdout(), run.stderr()
        text = out + err
        assert "Traceback" not in text, text[-3000:]
        assert code in fault.codes, text[-3000:]
        assert fault.shows in text, text[-3000:]
        if fault.check is not None:
            lines = [line for line in out.splitlines() if f"FINDING [{fault.check}]" in line and fault.shows in line]
            assert lines, out[-3000:]
        if fault.echo_tested:
            assert re.search(r"^echo\b", out, re.M), out[-2000:]
        if code == 2:  # a clear error is one line on stderr
            assert len([line for line in err.splitlines() if line.startswith("feeler:")]) == 1, err
    finally:
        left = left_running(run.tag)
        kill_all(left)
        run.kill()
    assert left == {}, f"left running after {fault.server}: {left}"


#: hostile_input_schemas: each tool feeler cannot make arguments for, the reason of its schema_usable finding
#: and a part of its message (feeler._limits.MAX_COUNT; generate/_ecma.py: the shape check and the time budget)
HOSTILE = {
    "huge_min_length": ("over-limit", "/properties/a/minLength: minLength 1e+308 is over the limit of 10,000"),
    "huge_min_items": ("over-limit", "/properties/a/minItems: minItems 1,000,000,000 is over the limit of 10,000"),
    "same_alternatives": ("slow-pattern", "pattern '^(a|a)*$' repeats alternatives that can match the same text"),
    "greedy_rounds": ("slow-pattern", "pattern '^(.*a){20}$' repeats a part whose matches can be split"),
    "nested_bounds": ("slow-pattern", "pattern '^(a{1,30}){1,30}$' repeats a part whose matches can be split"),
    "chained_alternatives": ("slow-pattern", "took more than 2s to match one value (catastrophic backtracking)"),
}


def test_unusable_input_schemas_are_findings_and_the_run_goes_on(tmp_path: Path) -> None:
    """A real ``feeler check --format json`` against hostile_input_schemas, bounded: each tool whose schema
    cannot be used is one schema_usable finding with its reason (MCP 2025-11-25 basic/index "JSON Schema
    usage": fail gracefully, one tool at a time), no traceback, and ``echo`` and the tool with a harmless
    ``maxLength: 1e308`` are still called (JSON Schema 2020-12 validation 6.3.1: any count is valid)."""
    import json

    run = start_feeler(tmp_path, "check", "--timeout", "5", "--samples", "3", "--no-probes", "--format", "json",
                       "--replay-dir", "replays", "--", *server("hostile_input_schemas"))  # fmt: skip
    try:
        code = run.wait(120)  # kills the group and fails the test past the bound
        out, err = run.stdout(), run.stderr()
        assert "Traceback" not in out + err and code == 1, (out + err)[-3000:]
        report = json.loads(out)
        found = {f["tool"]: (f["errorClass"], f["message"]) for f in report["findings"] if f["check"] == "schema_usable"}
        assert set(found) == set(HOSTILE), found
        for tool, (reason, says) in HOSTILE.items():
            assert found[tool][0] == reason and says in found[tool][1], (tool, found[tool])
        tools = report["tools"]
        assert tools["echo"]["go"]["entered"] > 0 and tools["echo"]["noGo"]["calls"] > 0, tools["echo"]
        assert tools["huge_max_length"]["go"]["entered"] > 0, tools["huge_max_length"]
    finally:
        left = left_running(run.tag)
        kill_all(left)
        run.kill()
    assert left == {}


def test_escaped_grandchild_is_named_and_the_grouped_one_ended(tmp_path: Path) -> None:
    """A child in the server's process group goes with the group; one in its own session (setsid(2))
    survives it and is named in a warning with its pid."""
    run = start_feeler(tmp_path, *QUICK, "--", *server("forks_grandchild"), env={"FEELER_CHILD_S": "60"})
    try:
        code = run.wait(90)  # bounded: kills the group and fails past it
        err = run.stderr()
        assert "Traceback" not in err and code == 0, err[-2000:]
        named = re.findall(r"feeler: warning: .*outside its process group.*?pid (\d+)", err)
        assert named, err[-2000:]
        deadline = time.monotonic() + 5.0  # bounded: a killed child may take a moment to leave /proc
        alive = marked(run.tag)
        while set(alive) != {int(named[0])} and time.monotonic() < deadline:
            time.sleep(0.1)
            alive = marked(run.tag)
        assert set(alive) == {int(named[0])}, alive  # only the escaped one: the grouped child was ended
    finally:
        kill_all(marked(run.tag))
        run.kill()
    assert left_running(run.tag) == {}


STOPS = [  # (server, signal, exit code, message); each starts a real feeler process (seconds of imports)
    pytest.param("hangs_on_call", signal.SIGTERM, 128 + signal.SIGTERM, "stopped by SIGTERM", id="hangs-SIGTERM"),
    pytest.param("ignores_sigterm", signal.SIGHUP, 128 + signal.SIGHUP, "stopped by SIGHUP", id="ignores-SIGHUP"),
    pytest.param("hangs_on_call", signal.SIGHUP, 128 + signal.SIGHUP, "stopped by SIGHUP", id="hangs-SIGHUP"),
    pytest.param("hangs_on_call", signal.SIGINT, 130, "interrupted", id="hangs-SIGINT"),
    pytest.param("ignores_sigterm", signal.SIGTERM, 128 + signal.SIGTERM, "stopped by SIGTERM", id="ignores-SIGTERM"),
    pytest.param("ignores_sigterm", signal.SIGINT, 130, "interrupted", id="ignores-SIGINT"),
]


@pytest.mark.parametrize(("name", "signum", "code", "says"), STOPS)
def test_feeler_stopped_mid_run_ends_its_server(tmp_path: Path, signum: int, code: int, says: str, name: str) -> None:
    """feeler killed mid-run leaves no server behind, even one that ignores SIGTERM (it gets SIGKILL)."""
    run = start_feeler(tmp_path, "check", "--timeout", "30", "--no-probes", "--", *server(name),
                       env={"FEELER_LINGER_S": "60"})
    try:
        deadline = time.monotonic() + 60
        while not any(name in cmd for cmd in marked(run.tag).values()):  # bounded: the server has started
            assert time.monotonic() < deadline and run.proc.poll() is None, run.stderr()[-2000:]
            time.sleep(0.1)
        time.sleep(1.0)  # let it get to the calls (hangs_on_call never answers one)
        os.kill(run.proc.pid, signum)
        assert run.wait(30) == code, run.stderr()[-2000:]
        assert says in run.stderr() and "Traceback" not in run.stderr()
    finally:
        left = left_running(run.tag)
        kill_all(left)
        run.kill()
    assert left == {}, f"left running: {left}"


def test_pytest_stopped_mid_run_ends_its_server(tmp_path: Path) -> None:
    """The plugin's runs too: SIGTERM to pytest unwinds like Ctrl-C (pytest exit code 2, "interrupted"),
    and the session teardown ends the server (pytest docs "Exit codes")."""
    import subprocess
    import sys

    command = " ".join(server("hangs_on_call"))
    (tmp_path / "pyproject.toml").write_text(f'[tool.feeler]\ntargets = {{ hang = {command!r} }}\ntimeout = 30\n')
    tag = uuid.uuid4().hex
    with open(tmp_path / "out.txt", "wb") as out:
        proc = subprocess.Popen([sys.executable, "-m", "pytest", "-p", "no:cacheprovider", "-q", "-k", "echo"],
                                cwd=tmp_path, stdout=out, stderr=subprocess.STDOUT, start_new_session=True,
                                env={**os.environ, MARKER: tag})
    try:
        deadline = time.monotonic() + 60
        while not any("hangs_on_call" in cmd for cmd in marked(tag).values()):  # bounded
            assert time.monotonic() < deadline and proc.poll() is None, (tmp_path / "out.txt").read_text()[-2000:]
            time.sleep(0.1)
        time.sleep(1.5)  # into the calls: hangs_on_call never answers one
        os.kill(proc.pid, signal.SIGTERM)
        assert proc.wait(40) == 2, (tmp_path / "out.txt").read_text()[-2000:]
    finally:
        left = left_running(tag)
        kill_all(left)
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
            proc.wait(10)
    assert left == {}, f"left running: {left}"
