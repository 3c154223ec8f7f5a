"""Tickets whose close is annotated idempotent, but a second close of the same ticket is refused.

SDK server (MCPServer) with hand-written schemas: ``open_ticket`` returns a new ``id``, ``close_ticket``
(annotated ``idempotentHint: true``) and ``read_ticket`` take a ``ticket_id``. Planted: the first
``close_ticket`` of a ticket succeeds and every later one is refused with isError ("already closed"),
although an idempotent call repeated with the same arguments must have no additional effect (MCP
2025-03-26 onward, ToolAnnotations). Reachable only by a chain: open, then close the returned id twice.
``python tests/servers/closes_twice.py`` serves stdio.
"""

from __future__ import annotations

import itertools
from typing import Any

from mcp.server.mcpserver import MCPServer
from mcp.server.mcpserver.exceptions import ToolError
from mcp_types import ToolAnnotations

from feeler.demo._declared import declared_tool

_LIMIT = 5000  # bounded memory: the oldest tickets go first
_tickets: dict[str, dict[str, Any]] = {}
_numbers = itertools.count(1)
TICKET_ID = {"type": "string", "pattern": "^T-[0-9]{4,}$", "description": "A ticket id, as open_ticket returns it."}
TICKET = {
    "type": "object",
    "properties": {"id": TICKET_ID, "title": {"type": "string"}, "state": {"enum": ["open", "closed"]}},
    "required": ["id", "title", "state"],
}


def open_ticket(title: str) -> dict[str, Any]:
    ticket = {"id": f"T-{next(_numbers):04d}", "title": title, "state": "open"}
    _tickets[ticket["id"]] = ticket
    while len(_tickets) > _LIMIT:
        del _tickets[next(iter(_tickets))]
    return dict(ticket)


def close_ticket(ticket_id: str) -> dict[str, Any]:
    ticket = _tickets.get(ticket_id)
    if ticket is None:
        raise ToolError(f"no ticket {ticket_id}")
    if ticket["state"] == "closed":
        raise ToolError(f"ticket {ticket_id} is already closed")
    ticket["state"] = "closed"
    return dict(ticket)


def read_ticket(ticket_id: str) -> dict[str, Any]:
    if ticket_id not in _tickets:
        raise ToolError(f"no ticket {ticket_id}")
    return dict(_tickets[ticket_id])


def _hints(read_only: bool, idempotent: bool) -> ToolAnnotations:
    return ToolAnnotations(read_only_hint=read_only, destructive_hint=False, idempotent_hint=idempotent, open_world_hint=False)


_BY_ID = {"type": "object", "properties": {"ticket_id": TICKET_ID}, "required": ["ticket_id"], "additionalProperties": False}
TOOLS = [
    declared_tool(open_ticket, name="open_ticket", description="Open a ticket; returns it with its new id.",
                  input_schema={"type": "object", "properties": {"title": {"type": "string", "minLength": 1, "maxLength": 60}},
                                "required": ["title"], "additionalProperties": False},
                  output_schema=TICKET, annotations=_hints(False, False)),
    declared_tool(close_ticket, name="close_ticket", description="Close a ticket by its id; returns it.",
                  input_schema=_BY_ID, output_schema=TICKET, annotations=_hints(False, True)),
    declared_tool(read_ticket, name="read_ticket", description="Read one ticket by its id.",
                  input_schema=_BY_ID, output_schema=TICKET, annotations=_hints(True, True)),
]  # fmt: skip

server = MCPServer("closes-twice", version="1.0.0", tools=TOOLS, log_level="WARNING")

if __name__ == "__main__":
    server.run("stdio")
