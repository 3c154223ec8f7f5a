"""Learned values: values in successful answers reach the inputs of other tools (issue 8, deliverable 3).

The server is real (tests/servers/reads_under_listed_roots.py, built with the official SDK, started as
a subprocess). Outcomes follow MCP 2025-11-25 server/tools: a success result enters, ``isError: true``
is a tool execution error. Values are checked by the oracle, ``jsonschema`` (JSON Schema 2020-12).
"""

from __future__ import annotations

import sys
from pathlib import Path

from feeler.catalog import Tool
from feeler.check.runner import RunOptions, Runner
from feeler.target import Target
from feeler.world import ValuePool
from feeler.world.learn import Learner, answer_values, listings, value_at

SERVERS = Path(__file__).resolve().parents[1] / "servers"


def test_listing_roots_open_the_read_tools_with_no_configuration() -> None:
    target = Target(kind="stdio", command=(sys.executable, str(SERVERS / "reads_under_listed_roots.py")))
    options = RunOptions(samples=3, probes=False, replay_dir=None, chain_runs=0)
    report = Runner(target, options).run()
    for name in ("read_text", "stat_path"):
        stats = report.tools[name]
        assert stats.world.entered_by_source["learned"] > 0, (name, stats.world.entered_by_source)
        assert stats.learned_from and all(p.startswith("list_roots /structuredContent/roots/") for p in stats.learned_from)
        # Without learning every read go case is refused ("outside the allowed roots").
    off = Runner(target, RunOptions(samples=3, probes=False, replay_dir=None, chain_runs=0, learn=False)).run()
    assert off.tools["read_text"].go_entered == 0


def test_values_in_structured_content_json_text_and_plain_text() -> None:
    structured = {"structuredContent": {"records": [{"id": "rec-0001", "title": "Tern"}]}, "content": []}
    found = {(f.name, f.place, f.value) for f in answer_values("list_records", structured)}
    assert ("id", "/structuredContent/records/0/id", "rec-0001") in found
    as_text = {"content": [{"type": "text", "text": '{"roots": ["/srv/a"]}'}]}
    (one,) = answer_values("list_roots", as_text)
    assert (one.name, one.place, one.inner, one.value) == ("roots", "/content/0/text", "/roots/0", "/srv/a")
    assert value_at(as_text, one.place, one.inner) == (True, "/srv/a")
    prose = {"content": [{"type": "text", "text": 'Booked BK-004211 for "Tern"; logs in /srv/quay/logs.'}]}
    kinds = {(f.kind, f.value) for f in answer_values("book_berth", prose)}
    assert {("id", "BK-004211"), ("name", "Tern"), ("path", "/srv/quay/logs")} <= kinds
    assert {f.value for f in answer_values("x", {"isError": True, "structuredContent": {"id": "a-1"}})} == set()


def test_learner_files_under_related_inputs_bounded() -> None:
    tools = [
        Tool({"name": "read_record", "inputSchema": {"type": "object", "properties": {"record_id": {"type": "string"}}}}),
        Tool({"name": "list_records", "annotations": {"readOnlyHint": True}, "inputSchema": {"type": "object"}}),
    ]
    pool = ValuePool(per_key=4)
    learner = Learner(pool, tools)
    for n in range(10):
        learner.learn("create_record", {"structuredContent": {"id": f"rec-{n:04d}"}, "content": []})
    values = pool.values_for("read_record", "/record_id", "record_id")
    assert [v.value for v in values] == ["rec-0009", "rec-0008", "rec-0007", "rec-0006"]  # bounded, newest first
    assert values[0].source == "learned" and values[0].provenance == "create_record /structuredContent/id"
    assert [t.name for t in listings(tools)] == ["list_records"]
