"""Two feeler processes at once over the same files: no corruption, nothing lost.

- Two ``feeler approve --yes`` at once into one baseline folder: the writer lock (``O_EXCL`` lock file,
  POSIX ``open(2)``) serialises them; afterwards the baseline is one of the two catalogs, whole and
  readable, and both commands succeeded. Bounded: ROUNDS rounds.
- Two processes saving examples into one example database (``.feeler/examples``, hypothesis'
  ``DirectoryBasedExampleDatabase``, opened through feeler's ``open_example_db``): every saved example
  of both is there afterwards (common practice: one file per example, written atomically).
"""

from __future__ import annotations

import json
import os
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
