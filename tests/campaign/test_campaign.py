"""``feeler campaign``: shards, resume after an interruption, budget, the call log.

References: JSON Lines (one JSON text per line; common practice, jsonlines.org) checked with `json`;
RFC 3339 timestamps in the call log; hypothesis' ``DirectoryBasedExampleDatabase`` (hypothesis docs,
"The Hypothesis example database") as the store that replays failing examples first.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from datetime import datetime
from pathlib import Path
from typing import Any

import pytest
from campaign_helpers import SERVER, TOOLS

from feeler.campaign import Campaign, CampaignOptions, open_example_db, parse_duration, parse_shard, read_call_log, shard_tools
from feeler.check.runner import RunOptions, Runner
from feeler.errors import UsageError
from feeler.target import Target

#: a bounded wait for the interrupted campaign to make some calls (the machine may be busy)
START_TIMEOUT = 120.0
CALL_KINDS = {"go", "no-go", "chain"}
OUTCOMES = {"entered", "stopped", "broke"}


def _campaign(target: Target, folder: Path, budget: float, **kw: Any) -> Campaign:
    runner = Runner(target, RunOptions(replay_dir=str(folder / "replays")))
    return Campaign(runner, CampaignOptions(budget=budget, folder=str(folder / "campaign"), **kw))


def test_parse_duration_and_shard() -> None:
    assert [parse_duration(t) for t in ("90", "90s", "15m", "2h", "1h30m")] == [90, 90, 900, 7200, 5400]
    assert parse_shard("2/3") == (2, 3) and parse_shard(None) is None
    for bad in ("0/2", "3/2", "x"):
        with pytest.raises(UsageError):
            parse_shard(bad)
    with pytest.raises(UsageError):
        parse_duration("soon")


def test_two_shards_cover_every_tool_exactly_once(several: Target, tmp_path: Path) -> None:
    """The tools of shard 1/2 and 2/2, as two real campaigns recorded them, split the catalog."""
    seen: list[str] = []
    for index in (1, 2):
        camp = _campaign(several, tmp_path / str(index), budget=2.0, shard=(index, 2))
        camp.run()
        state = json.loads(Path(camp.state_path).read_text(encoding="utf-8"))
        assert state["shard"] == [index, 2]
        seen += state["tools"]
    assert sorted(seen) == sorted(TOOLS)
    # Whatever order a server lists its tools in, the split is the same.
    assert shard_tools(list(reversed(TOOLS)), (1, 2)) == shard_tools(list(TOOLS), (1, 2))
    for n in (1, 3, 7):
        parts = [shard_tools(list(TOOLS), (i, n)) for i in range(1, n + 1)]
        assert sorted(sum(parts, [])) == sorted(TOOLS)


def test_campaign_stops_on_budget_and_logs_every_call(several: Target, tmp_path: Path) -> None:
    camp = _campaign(several, tmp_path, budget=4.0, example_db=open_example_db(str(tmp_path / "examples")))
    started = time.monotonic()
    report = camp.run()
    assert time.monotonic() - started < 4.0 + 30.0  # bounded (the last call and the replay files may follow)
    lines = read_call_log(camp.log_path)
    calls = sum(s.go_calls + s.nogo_calls for s in report.tools.values())
    assert len(lines) == camp.calls > 0
    assert sum(1 for line in lines if line["kind"] != "chain") == calls  # chain steps are logged, not counted as cases
    for line in lines:
        assert line["kind"] in CALL_KINDS and line["outcome"] in OUTCOMES and line["tool"] in TOOLS
        datetime.fromisoformat(line["time"].replace("Z", "+00:00"))  # RFC 3339
        assert len(line["argumentsDigest"]) == 16 and line["requestBytes"] > 0
    state = json.loads(Path(camp.state_path).read_text(encoding="utf-8"))
    assert state["done"] is True


def _lines(path: Path) -> list[str]:
    return path.read_text(encoding="utf-8").splitlines() if path.exists() else []


def test_interrupted_campaign_continues(several: Target, tmp_path: Path) -> None:
    """SIGTERM mid-run (as a cancelled CI job), then a kill leaving half a line: nothing is lost."""
    folder = tmp_path / "campaign"
    argv = [
        sys.executable, "-c", "import sys; from feeler.cli import run; sys.exit(run(sys.argv[1:]))",
        "campaign", "--budget", "40s", "--folder", str(folder), "--example-db", str(tmp_path / "examples"),
        "--replay-dir", str(tmp_path / "replays"), "--", sys.executable, str(SERVER),
    ]  # fmt: skip
    log = folder / "calls.jsonl"
    proc = subprocess.Popen(argv, stdout=subprocess.PIPE, stderr=subprocess.PIPE, start_new_session=True, cwd=tmp_path)
    try:
        deadline = time.monotonic() + START_TIMEOUT
        while len(_lines(log)) < 40 and time.monotonic() < deadline and proc.poll() is None:
            time.sleep(0.1)
        assert len(_lines(log)) >= 40, "the campaign made no calls in time"
        os.kill(proc.pid, signal.SIGTERM)
        _out, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
            proc.wait(10)
    assert proc.returncode == 130, err.decode()
    state = json.loads((folder / "state.json").read_text(encoding="utf-8"))
    # A stop signal waits while a finished call is counted and logged (feeler._signals.held): they agree.
    assert state["done"] is False and len(_lines(log)) == state["calls"]
    before_lines = _lines(log)
    before_findings = {f["check"] + "|" + str(f["tool"]) + "|" + f["errorClass"] for f in state["findings"]}  # camelCase, like every JSON feeler writes
    # A later kill in the middle of a write leaves half a line: the next start cuts it.
    with log.open("a", encoding="utf-8") as handle:
        handle.write('{"time": "2026-')
    camp = _campaign(several, tmp_path, budget=state["used"] + 3.0)
    assert camp.resumed == 1 and camp.round == state["round"] and camp.position == state["position"]
    report = camp.run()
    after = _lines(log)
    assert after[: len(before_lines)] == before_lines
    assert all(json.loads(line) for line in after)  # every line whole JSON
    cases = [line for line in after if json.loads(line)["kind"] != "chain"]
    assert len(cases) == sum(s.go_calls + s.nogo_calls for s in report.tools.values())
    found = {f.check + "|" + str(f.tool) + "|" + f.error_class for f in report.findings}
    assert before_findings <= found
    assert json.loads((folder / "state.json").read_text(encoding="utf-8"))["done"] is True


def test_a_campaign_that_cannot_start_leaves_nothing_behind(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # A server that exits at once: the campaign fails (exit 2) and leaves no empty state to "continue" later.
    from feeler.cli import run

    monkeypatch.chdir(tmp_path)
    code = run(["campaign", "--budget", "5s", "--", sys.executable, "-c", "import sys; sys.exit(3)"])
    assert code == 2
    assert not (tmp_path / ".feeler").exists()


def test_former_campaign_options_work_with_a_notice(several: Target, tmp_path: Path,
                                                    capsys: pytest.CaptureFixture[str]) -> None:
    # --seed is --sample-seed and --go-examples is --samples (DEVELOPERS.md, "Vocabulary"), for one release.
    from feeler import _deprecated
    from feeler.cli import run

    _deprecated._shown.clear()
    code = run(["campaign", "--budget", "2s", "--seed", "4", "--go-examples", "1", "--example-db", "none",
                "--folder", str(tmp_path / "c"), "--replay-dir", str(tmp_path / "r"), "--", *several.command])
    err = capsys.readouterr().err
    assert code in (0, 1), err
    assert "feeler: --seed is deprecated and will be removed in the next release; use --sample-seed" in err
    assert "feeler: --go-examples is deprecated and will be removed in the next release; use --samples" in err
    state = json.loads((tmp_path / "c" / "state.json").read_text(encoding="utf-8"))
    assert state["tools"]
