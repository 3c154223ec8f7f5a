"""Call chains (issue 8, deliverable 4), run with hypothesis' stateful testing.

Reference: hypothesis' stateful testing documentation, "Stateful tests"
(https://hypothesis.readthedocs.io/en/latest/stateful.html, URL from memory; the installed
``hypothesis.stateful`` module and ``RuleBasedStateMachine`` docstrings say the same): rules read values
from bundles and push values onto them, and a failing run is shrunk to a shorter sequence of steps.
The server is real (tests/servers/records_lost_on_update.py, official SDK, a subprocess). Outcomes follow
MCP 2025-11-25 server/tools (``isError: true`` is a refusal); ``idempotentHint`` is MCP's ToolAnnotations.
"""

from __future__ import annotations

import json
import re
import sys
from pathlib import Path

from feeler.check.replay import load_replay, replay
from feeler.check.runner import RunOptions, Runner
from feeler.target import Target

SERVERS = Path(__file__).resolve().parents[1] / "servers"


def _records() -> Target:
    return Target(kind="stdio", command=(sys.executable, str(SERVERS / "records_lost_on_update.py")))


def test_read_your_writes_defect_is_a_shrunk_chain_finding_that_replays(tmp_path: Path) -> None:
    options = RunOptions(samples=3, probes=False, replay_dir=str(tmp_path))
    report = Runner(_records(), options).run()
    chain = [f for f in report.findings if f.kind == "chain"]
    assert chain, [f.to_json() for f in report.findings]
    assert {f.check for f in chain} == {"read_your_writes"}
    assert {f.tool for f in chain} <= {"read_record", "update_record"}
    for finding in chain:
        sequence = finding.extra["sequence"]
        # Shrunk to a short sequence that shows it, ending in the refused call. The id comes either from
        # the update's answer (create -> update -> read) or, since the single-call pass has already
        # updated records on this server, from list_records showing an id filed under another key.
        assert 2 <= len(sequence) <= 3 and sequence[-1]["tool"] == finding.tool, sequence
        assert sequence[-1]["outcome"] == "stopped"
        (link,) = sequence[-1]["links"].values()
        source = sequence[link["step"]]
        assert source["outcome"] == "entered" and link["inner"] is None, sequence
        if source["tool"] == "update_record":
            assert link["place"] == "/structuredContent/id"
        else:
            assert source["tool"] == "list_records", sequence
            assert re.fullmatch(r"/structuredContent/records/[0-9]+/id", link["place"]), link
        data = load_replay(finding.replay or "")
        assert data["sequence"] == sequence and data["finding"]["kind"] == "chain"
    # A fresh server hands out its own ids: the replay takes them from the new answers.
    outcome = replay(load_replay(chain[0].replay or ""), timeout=120)  # a loaded 2-core machine starts servers slowly
    assert outcome.reproduced, outcome.messages
    assert json.loads(outcome.request)["params"]["name"] == chain[0].tool
    # Tool by tool the server shows nothing wrong (learned ids open read_record: a success result) ...
    assert not [f for f in report.findings if f.kind != "chain" and f.severity == "error"]
    assert report.tools["read_record"].world.entered_by_source["learned"] > 0
