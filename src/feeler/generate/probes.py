"""Protocol-level no-go requests: raw lines a server must answer cleanly (or not at all).

These break the JSON-RPC envelope or the ``tools/call`` request shape rather than a tool's schema,
so they are written as text: a probe line need not be valid JSON. Which probes apply depends on the
revision: batches are allowed only in 2025-03-26; 2026-07-28 requests carry the per-request
``_meta`` envelope (MCP 2026-07-28 basic/index). See the protocol digest (shared/PROTOCOL.md beside the repository), sections 3.2, 4, 5.4.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from feeler.errors import UsageError

__all__ = ["PROBES", "REVISIONS", "Probe", "protocol_probes"]

#: Revisions in order (compare by index, not by string).
REVISIONS = ("2024-11-05", "2025-03-26", "2025-06-18", "2025-11-25", "2026-07-28")
MODERN = ("2026-07-28",)
BATCH_REVISIONS = ("2025-03-26",)  # MCP 2025-03-26 basic/index: batches MUST be receivable; removed 2025-06-18


@dataclass(frozen=True)
class Probe:
    """One protocol-level no-go request.

    :param name: a short stable name (``unknown-tool``, ``arguments-array``...).
    :param text: the exact line to send (without the newline); not necessarily JSON.
    :param expects_answer: whether a clean server answers at all.
    :param expected: what a clean answer looks like, in words.
    :param codes: JSON-RPC error codes accepted as a clean answer (empty: a result is expected).
    :param id: the request id used, echoed exactly in a clean answer (``None``: none or null).
    :param result_ok: a result (not an error) is also a clean answer.
    :param silence_ok: no answer at all is also tolerated.
    """

    name: str
    text: str
    expects_answer: bool
    expected: str
    codes: tuple[int, ...] = ()
    id: Any = None
    result_ok: bool = False
    silence_ok: bool = False


def _line(message: Any) -> str:
    return json.dumps(message, separators=(",", ":"), ensure_ascii=False)


class _Ctx:
    def __init__(self, revision: str, tool: str, meta: dict | None) -> None:
        self.revision, self.tool, self.meta = revision, tool, meta

    def params(self, **fields: Any) -> dict:
        if self.meta is not None:
            fields["_meta"] = self.meta
        return fields

    def request(self, id_: Any, method: str, params: dict | None) -> dict:
        out: dict[str, Any] = {"jsonrpc": "2.0", "id": id_, "method": method}
        if params is not None:
            out["params"] = params
        return out


INVALID_PARAMS = "JSON-RPC error -32602 (invalid params) for this id"


def unknown_tool(c: _Ctx) -> Probe:
    rid = "feeler-unknown-tool"
    text = _line(c.request(rid, "tools/call", c.params(name=c.tool + "-feeler-missing", arguments={})))
    # MCP <rev> server/tools "Error Handling": unknown tool -> -32602.
    return Probe("unknown-tool", text, True, INVALID_PARAMS, (-32602,), rid)


def _arguments(kind: str, value: Any) -> Callable[[_Ctx], Probe]:
    def probe(c: _Ctx) -> Probe:
        rid = f"feeler-arguments-{kind}"
        text = _line(c.request(rid, "tools/call", c.params(name=c.tool, arguments=value)))
        # CallToolRequest.params.arguments is an object (mcp-types); a request not matching it is a protocol error.
        return Probe(f"arguments-{kind}", text, True, INVALID_PARAMS + " (or -32600)", (-32602, -32600), rid)

    probe.__name__ = f"arguments_{kind}"
    return probe


def missing_params(c: _Ctx) -> Probe:
    rid = "feeler-missing-params"
    return Probe("missing-params", _line(c.request(rid, "tools/call", None)), True, INVALID_PARAMS + " (or -32600)",
                 (-32602, -32600), rid)  # fmt: skip


def unknown_param(c: _Ctx) -> Probe:
    rid = "feeler-unknown-param"
    text = _line(c.request(rid, "tools/list", c.params(feelerUnknownParam=True)))
    return Probe("unknown-param", text, True, "a tools/list result (unknown param ignored) or -32602", (-32602,), rid,
                 result_ok=True)  # fmt: skip


def not_json(c: _Ctx) -> Probe:
    # JSON-RPC 2.0 section 5.1: parse error -32700, and section 5: id is null when it could not be read.
    return Probe("not-json", '{"jsonrpc": "2.0", "id": 1, "method": "tools/list", ', True,
                 "JSON-RPC error -32700 (parse error) with id null", (-32700,), None)  # fmt: skip


def unknown_method(c: _Ctx) -> Probe:
    rid = "feeler-unknown-method"
    text = _line(c.request(rid, "feeler/no-such-method", c.params()))
    return Probe("unknown-method", text, True, "JSON-RPC error -32601 (method not found) for this id", (-32601,), rid)


def string_id(c: _Ctx) -> Probe:
    rid = "feeler-id-\u00e9-7"
    text = _line(c.request(rid, "tools/list", c.params()))
    return Probe("string-id", text, True, "a tools/list result whose id is this exact string", (), rid, result_ok=True)


def integer_id(c: _Ctx) -> Probe:
    rid = 2**53 - 1  # the largest integer every JSON reader keeps exact
    text = _line(c.request(rid, "tools/list", c.params()))
    return Probe("integer-id", text, True, "a tools/list result whose id is this exact integer", (), rid, result_ok=True)


def null_id(c: _Ctx) -> Probe:
    text = _line(c.request(None, "tools/list", c.params()))
    # MCP basic/index: request ids MUST NOT be null. JSON-RPC 2.0 section 5.1: -32600 invalid request.
    return Probe("null-id", text, True, "JSON-RPC error -32600 (invalid request); no answer is tolerated",
                 (-32600,), None, silence_ok=True)  # fmt: skip


def batch(c: _Ctx) -> Probe:
    ids = ("feeler-batch-1", "feeler-batch-2")
    text = _line([c.request(i, "tools/list", c.params()) for i in ids])
    if c.revision in BATCH_REVISIONS:
        # MCP 2025-03-26 basic/index: implementations MUST support receiving JSON-RPC batches.
        return Probe("batch-allowed", text, True, "an array of two tools/list results, ids feeler-batch-1 and -2",
                     (), list(ids), result_ok=True)  # fmt: skip
    # 2024-11-05 has no batches; 2025-06-18 removed them: the array is not a valid request.
    return Probe("batch-forbidden", text, True, "JSON-RPC error -32600 (invalid request) with id null",
                 (-32600,), None)  # fmt: skip


def notification(c: _Ctx) -> Probe:
    params = {"requestId": "feeler-never-sent", "reason": "probe"}
    text = _line({"jsonrpc": "2.0", "method": "notifications/cancelled", "params": params})
    # JSON-RPC 2.0 section 4.1 and MCP basic/index: the receiver MUST NOT reply to a notification.
    return Probe("notification", text, False, "no answer")


def unknown_notification(c: _Ctx) -> Probe:
    text = _line({"jsonrpc": "2.0", "method": "notifications/feeler-unknown"})
    return Probe("unknown-notification", text, False, "no answer")


#: The probe table, in sending order.
PROBES: tuple[Callable[[_Ctx], Probe], ...] = (
    unknown_tool, _arguments("array", []), _arguments("string", "text"), _arguments("null", None),
    missing_params, unknown_param, not_json, unknown_method, string_id, integer_id, null_id, batch,
    notification, unknown_notification,
)  # fmt: skip


def protocol_probes(revision: str, tool_name: str, meta: dict | None = None) -> list[Probe]:
    """The protocol-level no-go requests for *revision*, aimed at the tool *tool_name*.

    :param revision: the negotiated protocol revision (``2024-11-05`` ... ``2026-07-28``).
    :param meta: the 2026-07-28 per-request ``_meta`` envelope put into ``params._meta`` (``None`` in the
        handshake era; for 2026-07-28 a minimal envelope is used when it is ``None``).
    :raises UsageError: an unknown revision.
    """
    if revision not in REVISIONS:
        raise UsageError(f"revision={revision!r} is not a known MCP revision; use one of {', '.join(REVISIONS)}")
    if revision in MODERN and meta is None:
        meta = {"io.modelcontextprotocol/protocolVersion": revision, "io.modelcontextprotocol/clientCapabilities": {}}
    return [make(_Ctx(revision, tool_name, meta)) for make in PROBES]
