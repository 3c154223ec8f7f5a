"""``--workers N``: sampled go cases on several sessions at once (feeler.check.parallel).

References: MCP 2025-11-25 basic/transports (stdio: the client launches the server as a subprocess, so
each worker is one server process; Streamable HTTP: a server serves several client sessions, each with its
own ``Mcp-Session-Id``); the call log's JSON Lines (common practice, jsonlines.org) checked with `json`.
"""

from __future__ import annotations

import json
from pathlib import Path

from feeler.campaign import Campaign, CampaignOptions, read_call_log
from feeler.check.runner import RunOptions, Runner, hypothesis_share
from feeler.target import Target


def test_stdio_workers_are_server_processes_judged_like_one(several: Target, tmp_path: Path) -> None:
    runner = Runner(several, RunOptions(samples=400, sample_seed=4, include=["charlie"], probes=False, chain_runs=0,
                                        workers=3, replay_dir=str(tmp_path / "replays")))  # fmt: skip
    camp = Campaign(runner, CampaignOptions(budget=60.0, folder=str(tmp_path / "c"), samples=400, max_samples=400))
    seen_pids: set[int] = set()
    judged = runner._judge

    def judge(tool, stats, case, ctx):  # type: ignore[no-untyped-def]
        if runner._workers is not None:
            seen_pids.update(s.transport.proc.pid for s in runner._workers.sessions if s is not None)
        return judged(tool, stats, case, ctx)

    runner._judge = judge  # type: ignore[method-assign]
    runner.open()
    tool = next(t for t in runner.tools() if t.name == "charlie")
    stats = runner.stats(tool)
    runner._drawn_go(tool, stats)
    runner.close()
    camp.log.close()
    assert len(seen_pids) == 3  # three server processes answered
    lines = read_call_log(camp.log_path)
    fast = 400 - hypothesis_share(400)  # hypothesis draws its share on the runner's session first
    assert runner.drawn_done == fast  # every case of the fast sampler went out through the workers
    assert len(lines) == stats.go_calls == camp.calls >= fast
    assert all(line["tool"] == "charlie" and line["kind"] == "go" for line in lines)
    # charlie's flaw (n ending in 7; tests/servers/several_tools_one_flaw.py) is found through the workers
    assert any(f.tool == "charlie" and f.kind == "go" and f.severity == "error" for f in runner.report.findings)


def test_http_workers_are_concurrent_sessions(demo_http_url: str, tmp_path: Path) -> None:
    target = Target.parse(demo_http_url)
    runner = Runner(target, RunOptions(samples=60, sample_seed=1, include=["quote_fee"], probes=False, chain_runs=0,
                                       workers=2, replay_dir=str(tmp_path / "replays")))  # fmt: skip
    sessions: set[int] = set()
    judged = runner._judge

    def judge(tool, stats, case, ctx):  # type: ignore[no-untyped-def]
        if runner._workers is not None:
            sessions.update(id(s) for s in runner._workers.sessions if s is not None)
        return judged(tool, stats, case, ctx)

    runner._judge = judge  # type: ignore[method-assign]
    report = runner.run()
    assert len(sessions) == 2  # two MCP sessions on the one server
    stats = report.tools["quote_fee"]
    assert stats.go_calls >= 60 and stats.go_entered > 0
    assert runner._workers is None or not runner._workers.sessions  # closed with the run
    # The demo's planted structured-output defect on quote_fee (tests/demo_defects.py) still shows.
    doc = [f for f in report.findings if f.tool == "quote_fee" and f.check == "output_schema"]
    assert doc, json.dumps([f.check for f in report.findings])
