"""Records keyed by returned ids, where an update loses the record: read-your-writes breaks after update_record.

SDK server (MCPServer) with hand-written schemas: ``create_record`` returns a new ``id``, ``read_record``
and ``update_record`` take a ``record_id``, ``list_records`` lists them. Every tool works on its own
(create then read works), but ``update_record`` files the new version under another key while it
answers with the old id, so the id it just returned is refused by ``read_record`` and ``update_record``.
That defect is reachable only by a chain (create -> update -> read). ``python
tests/servers/records_lost_on_update.py`` serves stdio; ``--http --port N`` serves Streamable HTTP.
"""

from __future__ import annotations

import argparse
import itertools
from typing import Any

from mcp.server.mcpserver import MCPServer
from mcp.server.mcpserver.exceptions import ToolError
from mcp_types import ToolAnnotations

from feeler.demo._declared import declared_tool

_LIMIT = 5000  # bounded memory: the oldest records go first
_records: dict[str, dict[str, Any]] = {}
_numbers = itertools.count(1)
RECORD_ID = {"type": "string", "pattern": "^rec-[0-9]{4,}$", "description": "A record id, as create_record returns it."}
TITLE = {"type": "string", "minLength": 1, "maxLength": 60}
RECORD = {
    "type": "object",
    "properties": {"id": RECORD_ID, "title": TITLE, "version": {"type": "integer", "minimum": 1}},
    "required": ["id", "title", "version"],
}


def _keep(key: str, record: dict[str, Any]) -> None:
    _records[key] = record
    while len(_records) > _LIMIT:
        del _records[next(iter(_records))]


def create_record(title: str) -> dict[str, Any]:
    record = {"id": f"rec-{next(_numbers):04d}", "title": title, "version": 1}
    _keep(record["id"], record)
    return dict(record)


def read_record(record_id: str) -> dict[str, Any]:
    if record_id not in _records:
        raise ToolError(f"no record {record_id}")
    return dict(_records[record_id])


def update_record(record_id: str, title: str) -> dict[str, Any]:
    if record_id not in _records:
        raise ToolError(f"no record {record_id}")
    old = _records.pop(record_id)
    record = {"id": record_id, "title": title, "version": old["version"] + 1}
    _keep(f"{record_id}~v{record['version']}", record)
    return dict(record)


def list_records() -> dict[str, Any]:
    shown = [{"id": r["id"], "title": r["title"]} for r in list(_records.values())[-20:]]
    return {"records": shown, "count": len(_records)}


def _hints(read_only: bool, idempotent: bool) -> ToolAnnotations:
    return ToolAnnotations(read_only_hint=read_only, destructive_hint=False, idempotent_hint=idempotent, open_world_hint=False)


TOOLS = [
    declared_tool(create_record, name="create_record", description="Create a record; returns it with its new id.",
                  input_schema={"type": "object", "properties": {"title": TITLE}, "required": ["title"],
                                "additionalProperties": False},
                  output_schema=RECORD, annotations=_hints(False, False)),
    declared_tool(read_record, name="read_record", description="Read one record by its id.",
                  input_schema={"type": "object", "properties": {"record_id": RECORD_ID}, "required": ["record_id"],
                                "additionalProperties": False},
                  output_schema=RECORD, annotations=_hints(True, True)),
    declared_tool(update_record, name="update_record", description="Give a record a new title; returns the record.",
                  input_schema={"type": "object", "properties": {"record_id": RECORD_ID, "title": TITLE},
                                "required": ["record_id", "title"], "additionalProperties": False},
                  output_schema=RECORD, annotations=_hints(False, False)),
    declared_tool(list_records, name="list_records", description="The newest records and how many there are.",
                  input_schema={"type": "object", "properties": {}, "additionalProperties": False},
                  output_schema={"type": "object", "properties": {"records": {"type": "array"}, "count": {"type": "integer"}},
                                 "required": ["records", "count"]},
                  annotations=_hints(True, True)),
]  # fmt: skip

server = MCPServer("records-lost-on-update", version="1.0.0", tools=TOOLS, log_level="WARNING")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--http", action="store_true")
    parser.add_argument("--port", type=int, default=0)
    options = parser.parse_args()
    if options.http:
        from feeler.demo._serve import serve_http

        serve_http(server.streamable_http_app(), options.port)
    else:
        server.run("stdio")


if __name__ == "__main__":
    main()
