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


def _pool_state(pool: ValuePool) -> list[tuple[object, list[tuple[str, str]]]]:
    return [(key, [(text, v.provenance) for text, v in slot.items()]) for key, slot in pool._values.items()]


def test_an_answer_identical_to_the_last_one_is_not_read_again() -> None:
    """Reading the same answer again would file the same values in the same order; the learner skips it,
    and the pool is exactly what reading it would leave. Not skipped: another tool, an answer equal only
    under Python's == (1 and 1.0 and true are different JSON: RFC 8259 section 6 numbers vs literals;
    key order changes the filing order), a pool someone else touched, or an answer whose reading evicted
    a value (reading it again would evict again)."""
    from feeler.world.learn import same_json

    tools = [Tool({"name": "read_record", "inputSchema": {"type": "object", "properties": {
        "record_id": {"type": "string"}, "count_id": {"type": "integer"}}}})]  # fmt: skip
    answer = {"structuredContent": {"id": "rec-1", "count_id": 1}, "content": []}

    def twice(first: dict, second: dict, between: object = None, per_key: int = 16) -> tuple[int, bool]:
        skipping, reading = ValuePool(per_key=per_key), ValuePool(per_key=per_key)
        learner, reader = Learner(skipping, tools), Learner(reading, tools)
        for pool, who in ((skipping, learner), (reading, reader)):
            who.learn("create_record", first)
            if between is not None:
                pool.add("record_id", between, source="learned", provenance="elsewhere")
        adds = skipping.adds
        learner.learn("create_record", second)
        reader._last = None  # the reference reads every answer
        reader.learn("create_record", second)
        assert _pool_state(skipping) == _pool_state(reading)  # skipped or not, the same pool
        return skipping.adds - adds, same_json(first, second)

    assert twice(answer, json_copy(answer)) == (0, True)  # skipped: nothing added
    assert twice(answer, {"structuredContent": {"id": "rec-1", "count_id": 1.0}, "content": []})[1] is False
    assert twice(answer, {"structuredContent": {"id": "rec-1", "count_id": True}, "content": []})[1] is False
    assert twice(answer, {"content": [], "structuredContent": {"count_id": 1, "id": "rec-1"}})[1] is False
    assert twice(answer, json_copy(answer), between="rec-9")[0] > 0  # the pool changed in between: read again
    many = {"structuredContent": {"records": [{"id": f"rec-{n}"} for n in range(6)]}, "content": []}
    assert twice(many, json_copy(many), per_key=4)[0] > 0  # its reading evicted values: read again
    pool = ValuePool()
    learner = Learner(pool, tools)
    learner.learn("create_record", answer)
    adds = pool.adds
    learner.learn("list_records", json_copy(answer))
    assert pool.adds > adds  # another tool (another provenance): read again


def json_copy(value: object) -> dict:
    import json

    return json.loads(json.dumps(value))
