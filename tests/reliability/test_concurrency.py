"""Two feeler processes at once over the same files: no corruption, nothing lost.

- Two ``feeler approve --yes`` at once into one baseline folder: the writer lock (``O_EXCL`` lock file,
  POSIX ``open(2)``) serialises them; afterwards the baseline is one of the two catalogs, whole and
  readable, and both commands succeeded. Bounded: ROUNDS rounds.
- Two ``pytest -n 2`` runs of the plugin at once in one project (one baselines folder, one replay folder,
  one example database folder), while ``feeler approve --yes`` rewrites that baseline: both runs fail
  exactly the items a run alone fails, with the same findings (nothing lost), no item reads a torn
  baseline, and every file left behind is whole. Bounded: PLUGIN_ROUNDS rounds, each process waited for
  with a timeout. (The plugin itself draws no examples from a database: its runs set none; a campaign
  does, and the test below covers two writers of one example database.)
- Two processes saving examples into one example database (``.feeler/examples``, hypothesis'
  ``DirectoryBasedExampleDatabase``, opened through feeler's ``open_example_db``): every saved example
  of both is there afterwards (common practice: one file per example, written atomically).
"""

from __future__ import annotations

import json
import os
import re
import signal
import subprocess
import sys
from pathlib import Path

from feeler.baseline.store import BaselineStore

PY = sys.executable
ROUNDS = 3
#: as from a shell: not an xdist worker (those never write baselines)
ENV = {k: v for k, v in os.environ.items() if k != "PYTEST_XDIST_WORKER"}
FEELER = "import sys; from feeler.cli import run; sys.exit(run(sys.argv[1:]))"


def _catalog(tool: str) -> dict:
    return {"format": "feeler-catalog/1", "revision": "2025-11-25", "era": "handshake",
            "tools": [{"name": tool, "inputSchema": {"type": "object"}}]}


def test_two_approvals_at_once_leave_one_whole_baseline(tmp_path: Path) -> None:
    for name in ("a", "b"):
        (tmp_path / f"{name}.json").write_text(json.dumps(_catalog(f"tool_{name}")))
    store = BaselineStore.from_folder(tmp_path / "baselines" / "shared")
    for round_no in range(ROUNDS):  # bounded loop
        procs = [
            subprocess.Popen([PY, "-c", FEELER, "approve", f"{name}.json", "--yes", "--baselines", "baselines",
                              "--name", "shared", "--source-ref", f"r{round_no}{name}"],
                             cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE, start_new_session=True,
                             env=ENV)
            for name in ("a", "b")
        ]
        results = [(p.wait(120), p.stderr.read().decode()) for p in procs]  # type: ignore[union-attr]
        for proc in procs:
            proc.stdout.close()  # type: ignore[union-attr]
            proc.stderr.close()  # type: ignore[union-attr]
        assert [code for code, _ in results] == [0, 0], results
        tools = [t.name for t in store.read_catalog().tool_list()]  # whole and readable, or this raises
        assert tools in (["tool_a"], ["tool_b"])
        assert store.read_header()["sourceRef"] in (f"r{round_no}a", f"r{round_no}b")
        assert not list(store.folder.glob(".*.tmp")) and not (store.folder / ".feeler-write.lock").exists()


SAVER = """
import sys
from feeler.campaign.database import open_example_db
db = open_example_db(sys.argv[1])
for i in range(int(sys.argv[3])):
    db.save(b"shared-key", f"{sys.argv[2]}-{i}".encode())
"""


def test_two_writers_lose_no_example(tmp_path: Path) -> None:
    folder = str(tmp_path / ".feeler" / "examples")
    count = 150
    procs = [subprocess.Popen([PY, "-c", SAVER, folder, who, str(count)], start_new_session=True) for who in ("x", "y")]
    assert [p.wait(120) for p in procs] == [0, 0]
    from feeler.campaign.database import open_example_db

    saved = set(open_example_db(folder).fetch(b"shared-key"))
    assert saved == {f"{who}-{i}".encode() for who in ("x", "y") for i in range(count)}


FAULTY = Path(__file__).resolve().parents[1] / "check" / "servers" / "faulty.py"
PLUGIN_ROUNDS = 2
#: approvals (baseline rewrites) at most per round, one after another while the two runs go on
MAX_WRITES = 40
#: seconds one pytest run (two workers) may take before the test fails and ends it
PLUGIN_BOUND = 240.0


def _start(argv: list[str], cwd: Path, log: Path) -> subprocess.Popen[bytes]:
    with open(log, "wb") as out:
        return subprocess.Popen(argv, cwd=cwd, stdin=subprocess.DEVNULL, stdout=out, stderr=subprocess.STDOUT,
                                start_new_session=True, env=ENV)


def _finish(proc: subprocess.Popen[bytes], log: Path) -> tuple[int, str]:
    try:
        code = proc.wait(PLUGIN_BOUND)
    except subprocess.TimeoutExpired:
        os.killpg(proc.pid, signal.SIGKILL)
        proc.wait(10)
        raise AssertionError(f"{proc.args} did not end within {PLUGIN_BOUND:g}s: {log.read_text()[-2000:]}") from None
    return code, log.read_text(errors="replace")


def _outcome(text: str) -> tuple[set[str], set[str]]:
    """The failed items and the findings (check and message) a pytest run printed."""
    failed = {line.split(" ")[1] for line in text.splitlines() if line.startswith("FAILED ")}
    findings = set(re.findall(r"^\[[a-z_]+\] [^\n]*$", text, re.M))  # "[check] message", one line per finding
    return failed, findings


def test_two_plugin_runs_on_two_workers_share_one_project(tmp_path: Path) -> None:
    """pytest-xdist docs (``-n 2``); pytest docs "Exit codes" (1: tests failed); POSIX rename(2) (the
    baseline store's atomic replace): a reader sees the old file or the new one, never a torn one."""
    command = f"{PY} {FAULTY} nogo-internal"  # no-go cases end in -32603: nogo_stops findings, no randomness
    (tmp_path / "pyproject.toml").write_text(
        f'[tool.feeler]\ntargets = {{ svc = {command!r} }}\nsamples = 2\nreplay_dir = "replays"\n'
        f'baselines = "baselines"\n')
    approve = [PY, "-c", FEELER, "approve", "--yes", "--baselines", "baselines", command]
    assert _finish(_start(approve, tmp_path, tmp_path / "approve-0.txt"), tmp_path / "approve-0.txt")[0] == 0
    run = [PY, "-m", "pytest", "-p", "no:cacheprovider", "-q", "-rf", "-n", "2", "-o", "console_output_style=classic"]
    alone_code, alone = _finish(_start(run, tmp_path, tmp_path / "alone.txt"), tmp_path / "alone.txt")
    expected = _outcome(alone)
    assert alone_code == 1 and expected[0] and expected[1], alone[-3000:]  # the defect fails items on its own
    store = BaselineStore.from_folder(tmp_path / "baselines" / os.listdir(tmp_path / "baselines")[0])
    for round_no in range(PLUGIN_ROUNDS):  # bounded loop
        logs = [tmp_path / f"run-{round_no}-{i}.txt" for i in range(2)]
        procs = [_start(run, tmp_path, log) for log in logs]
        writes = 0
        while writes < MAX_WRITES and any(proc.poll() is None for proc in procs):  # bounded: rewrite while they read
            writer_log = tmp_path / f"approve-{round_no}-{writes}.txt"
            assert _finish(_start(approve, tmp_path, writer_log), writer_log)[0] == 0, writer_log.read_text()[-2000:]
            writes += 1
        results = [_finish(proc, log) for proc, log in zip(procs, logs)]
        assert writes > 0
        for code, text in results:
            assert "INTERNALERROR" not in text and "Traceback" not in text, text[-3000:]
            assert "baseline cannot be used" not in text, text[-3000:]
            assert code == 1 and _outcome(text) == expected, text[-3000:]
        assert [t.name for t in store.read_catalog().tool_list()] == ["echo"]  # whole and readable
        assert not list(store.folder.glob(".*.tmp")) and not (store.folder / ".feeler-write.lock").exists()
        for replay in (tmp_path / "replays").rglob("*.json"):
            json.loads(replay.read_text())  # every replay file whole
