"""Running a real ``feeler`` subprocess for a fault case, and finding what it left running.

Each case gets its own marker in the environment (``FEELER_FAULT_CASE=<unique>``); feeler passes its
environment on to the servers it starts, and they to their children, so ``/proc/<pid>/environ`` finds
every process of the case, even one re-parented to pid 1 (proc(5)). Linux only.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
import uuid
from dataclasses import dataclass
from pathlib import Path

SERVERS = Path(__file__).resolve().parents[1] / "servers"
MARKER = "FEELER_FAULT_CASE"
#: bounded wait for processes that were just ended to disappear
GRACE = 5.0


def _read(path: str) -> bytes:
    try:
        with open(path, "rb") as handle:
            return handle.read()
    except OSError:
        return b""


def marked(tag: str) -> dict[int, str]:
    """Live (non-zombie) processes carrying the marker *tag*: pid -> command line."""
    needle = f"{MARKER}={tag}".encode()
    found = {}
    for entry in os.listdir("/proc"):
        if not entry.isdigit() or needle not in _read(f"/proc/{entry}/environ").split(b"\0"):
            continue
        fields = _read(f"/proc/{entry}/stat").rpartition(b")")[2].split()
        if fields and fields[0] not in (b"Z", b"X"):
            found[int(entry)] = _read(f"/proc/{entry}/cmdline").replace(b"\0", b" ").decode("utf-8", "replace")
    return found


def left_running(tag: str, grace: float = GRACE) -> dict[int, str]:
    """What still runs after a bounded grace wait."""
    deadline = time.monotonic() + grace
    while True:
        left = marked(tag)
        if not left or time.monotonic() > deadline:
            return left
        time.sleep(0.1)


def kill_all(pids: object) -> None:
    for pid in list(pids):  # type: ignore[call-overload]
        try:
            os.kill(pid, signal.SIGKILL)
        except ProcessLookupError:
            pass


@dataclass
class Feeler:
    """A running ``feeler`` command (own process group, output in files so a chatty run never blocks)."""

    proc: subprocess.Popen[bytes]
    tag: str
    out: Path
    err: Path

    def wait(self, timeout: float) -> int:
        try:
            return self.proc.wait(timeout)
        except subprocess.TimeoutExpired:
            self.kill()
            raise AssertionError(f"feeler did not finish within {timeout:g} s; stderr: {self.stderr()[-800:]}") from None

    def kill(self) -> None:
        try:
            os.killpg(self.proc.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
        self.proc.wait(10)
        kill_all(marked(self.tag))

    def stdout(self) -> str:
        return self.out.read_text(errors="replace")

    def stderr(self) -> str:
        return self.err.read_text(errors="replace")


def start_feeler(tmp_path: Path, *argv: str, env: dict[str, str] | None = None) -> Feeler:
    tag = uuid.uuid4().hex
    out, err = tmp_path / f"out-{tag}.txt", tmp_path / f"err-{tag}.txt"
    with open(out, "wb") as o, open(err, "wb") as e:
        proc = subprocess.Popen(
            [sys.executable, "-c", "import sys; from feeler.cli import run; sys.exit(run(sys.argv[1:]))", *argv],
            stdin=subprocess.DEVNULL, stdout=o, stderr=e, cwd=tmp_path, start_new_session=True,
            env={**os.environ, **(env or {}), MARKER: tag},
        )
    return Feeler(proc, tag, out, err)


def server(name: str) -> list[str]:
    return [sys.executable, str(SERVERS / f"{name}.py")]
