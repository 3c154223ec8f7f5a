"""Small stdio MCP servers, each breaking exactly one rule a feeler check enforces.

``python tests/check/servers/faulty.py FAULT`` serves stdio (newline-delimited JSON-RPC, MCP basic/transports)
with the hand-written loop of ``tests/servers/_wire.py``. ``FAULT`` is a key of :data:`FAULTS`; ``clean``
is the well-behaved baseline (the ``echo`` tool validates its arguments and answers bad ones with
``isError: true``). Each fault changes one hook, so a test that runs one check against ``clean`` and
against the fault shows that the check both passes and fails for the right reason.

Environment: ``FEELER_CALL_LOG`` (fault ``record``) names a file that gets one line per ``tools/call``.
"""

from __future__ import annotations

import json
import os
import sys
import time
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "servers"))

from _wire import (  # noqa: E402  (the shared loop lives in tests/servers)
    ECHO_TOOL,
    INVALID_PARAMS,
    NoAnswer,
    RpcError,
    WireServer,
    main,
    text_result as _text,
)

INTERNAL_ERROR = -32603


def _valid_echo(params: dict[str, Any]) -> bool:
    arguments = params.get("arguments")
    return (
        isinstance(arguments, dict)
        and set(arguments) == {"text"}
        and isinstance(arguments["text"], str)
        and len(arguments["text"]) <= 1000
    )


class Clean(WireServer):
    """The baseline: the _wire echo tool, which validates and answers bad arguments with isError."""

    name = "faulty-clean"

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        return self.call_echo(params)


# -- envelope and result shape -----------------------------------------------------------------


class Answer10(Clean):
    """Answers tools/call with "jsonrpc": "1.0" (JSON-RPC 2.0 section 5: MUST be exactly "2.0")."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self.send({"jsonrpc": "1.0", "id": request_id, "result": self.call_echo(params)})
        raise NoAnswer


class ResultAndError(Clean):
    """Answers tools/call with both result and error (JSON-RPC 2.0 section 5: exactly one)."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self.send({"jsonrpc": "2.0", "id": request_id, "result": self.call_echo(params), "error": {"code": -32603, "message": "x"}})
        raise NoAnswer


class BadErrorObject(Clean):
    """Errors on tools/call with a string code and a number message (JSON-RPC 2.0 section 5.1)."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self.send({"jsonrpc": "2.0", "id": request_id, "error": {"code": "bad-arguments", "message": 42}})
        raise NoAnswer


class StringId(Clean):
    """Echoes an integer id as a string ("7" for 7): the type is not preserved (JSON-RPC 2.0 section 5)."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self.answer(str(request_id), self.call_echo(params))
        raise NoAnswer


class NoId(Clean):
    """Answers tools/call with no id member at all (JSON-RPC 2.0 section 5: id is REQUIRED)."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self.send({"jsonrpc": "2.0", "result": self.call_echo(params)})
        raise NoAnswer


class BadContent(Clean):
    """A text content block without its required "text" (MCP server/tools, TextContent; mcp-types)."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self.call_echo(params)
        return {"content": [{"type": "text", "body": "the text went into the wrong member"}]}


# -- go / no-go verdicts ------------------------------------------------------------------------


class AcceptsAnything(Clean):
    """Never validates: every call, valid or not, gets a success result."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        return _text(json.dumps(params.get("arguments")))


class NogoInternal(Clean):
    """Bad arguments end in -32603 instead of -32602 or isError."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if not _valid_echo(params):
            raise RpcError(INTERNAL_ERROR, "Internal error")
        return self.call_echo(params)


class NogoWrongCode(Clean):
    """Bad arguments get -32000, a code that means neither invalid params nor a tool error."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if not _valid_echo(params):
            raise RpcError(-32000, "arguments not accepted")
        return self.call_echo(params)


class NogoProtocol(Clean):
    """Bad arguments get a clean -32602 (the pre-2025-11-25 style): no finding."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if not _valid_echo(params):
            raise RpcError(INVALID_PARAMS, "Invalid params: echo takes one string argument, text")
        return self.call_echo(params)


class RefusesValid(Clean):
    """Every call, valid or not, gets -32602: the schema and the implementation disagree."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        raise RpcError(INVALID_PARAMS, "Invalid params: text is not accepted here")


class GoInternal(Clean):
    """Valid calls end in -32603."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        raise RpcError(INTERNAL_ERROR, "Internal error")


class AlwaysIsError(Clean):
    """Every call gets isError: true (the tool accepts nothing its schema promises)."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        return _text("echo is switched off", error=True)


class ExceptionName(Clean):
    """Valid calls get an isError text that names an unhandled exception class."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if _valid_echo(params):
            return _text("Error executing tool echo: KeyError: 'upstream'", error=True)
        return self.call_echo(params)


COUNT_TOOL = {
    "name": "count",
    "description": "Return the count it is given (1 to 10).",
    "inputSchema": {
        "type": "object",
        "properties": {"count": {"type": "integer", "minimum": 1, "maximum": 10}},
        "required": ["count"],
        "additionalProperties": False,
    },
}


class Bounded(Clean):
    """A tool whose schema says 1 <= count <= 10, and which honours both bounds."""

    def __init__(self) -> None:
        super().__init__()
        self.tools = [COUNT_TOOL]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if params.get("name") != "count":
            raise RpcError(INVALID_PARAMS, f"Unknown tool: {params.get('name')!r}")
        arguments = params.get("arguments")
        count = arguments.get("count") if isinstance(arguments, dict) else None
        if (
            not isinstance(arguments, dict)
            or set(arguments) != {"count"}
            or not isinstance(count, int)
            or isinstance(count, bool)
            or not 1 <= count <= 10
        ):
            return _text("count must be an integer from 1 to 10", error=True)
        return _text(str(count))


class OffByOne(Bounded):
    """The schema says maximum 10 (inclusive: JSON Schema 2020-12 validation 6.2.2); 10 is refused."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        arguments = params.get("arguments")
        if isinstance(arguments, dict) and arguments.get("count") == 10:
            return _text("count must be below 10", error=True)
        return Bounded.on_tools_call(self, params, request_id)


# -- leaks ------------------------------------------------------------------------------------

LEAKS = {
    "python": 'Traceback (most recent call last):\n  File "/srv/app/tools.py", line 12, in echo\nValueError: no',
    "javascript": "Error: no\n    at echo (/app/dist/tools.js:12:7)\n    at process (node:internal/x:1:1)",
    "java": "java.lang.IllegalStateException: no\n\tat org.example.Tools.echo(Tools.java:12)",
    "go": "panic: runtime error: index out of range\n\ngoroutine 1 [running]:\nmain.echo()",
    "path": "cannot open /home/builder/echo/config.yaml",
    "secret": "upstream refused key {secret}",
}


class Leaky(Clean):
    """Invalid arguments are refused with isError, but the text shows one kind of internals (argv[2])."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if _valid_echo(params):
            return self.call_echo(params)
        kind = sys.argv[2] if len(sys.argv) > 2 else "python"
        text = LEAKS[kind].format(secret=os.environ.get("FEELER_TEST_API_KEY", ""))
        return _text(text, error=True)


# -- structured output ------------------------------------------------------------------------

SHOUT_TOOL = {
    "name": "shout",
    "description": "Upper-case a word.",
    "inputSchema": {
        "type": "object",
        "properties": {"word": {"type": "string", "maxLength": 20}},
        "required": ["word"],
        "additionalProperties": False,
    },
    "outputSchema": {
        "type": "object",
        "properties": {"upper": {"type": "string"}, "length": {"type": "integer", "minimum": 0}},
        "required": ["upper", "length"],
        "additionalProperties": False,
    },
    "annotations": {"readOnlyHint": True},
}


class Structured(Clean):
    """A tool with an outputSchema; ``mode`` decides how its structured answer goes wrong."""

    mode = "ok"

    def __init__(self) -> None:
        super().__init__()
        self.tools = [SHOUT_TOOL]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        arguments = params.get("arguments")
        word = arguments.get("word") if isinstance(arguments, dict) else None
        if params.get("name") != "shout" or not isinstance(word, str) or len(word) > 20 or set(arguments) != {"word"}:
            return _text("shout takes one argument, word (a string of at most 20 characters)", error=True)
        structured: dict[str, Any] = {"upper": word.upper(), "length": len(word)}
        if self.mode == "missing":
            return _text(json.dumps(structured))
        if self.mode == "invalid":
            structured["length"] = str(len(word))  # a string where the schema says integer
        mirror = json.dumps(structured) if self.mode != "unmirrored" else f"{word.upper()} ({len(word)} letters)"
        return {"content": [{"type": "text", "text": mirror}], "structuredContent": structured}


def _structured(mode: str) -> type[Structured]:
    return type(f"Structured_{mode}", (Structured,), {"mode": mode})


def _nested_output(levels: int) -> dict[str, Any]:
    schema: dict[str, Any] = {"type": "string"}
    for _ in range(levels):
        schema = {"type": "object", "properties": {"a": schema}}
    return schema


#: argv[2] of fault ``output-hostile``: the outputSchema of ``shout`` (answers stay as in output-ok).
HOSTILE_OUTPUTS: dict[str, dict[str, Any]] = {
    # a nested open-ended repeat: exponential on a near miss in a backtracking engine
    "nested-repeat": {"type": "object", "properties": {"upper": {"type": "string", "pattern": "^(.+)+$"}}},
    # an ambiguous alternation under a repeat: not a nested repeat, still exponential on a near miss
    "ambiguous-repeat": {"type": "object", "properties": {"upper": {"type": "string", "pattern": "^(A|A)*$"}}},
    # the same alternation thirty times in a row: no repeat for a shape check to see, 2**30 ways to try
    "chained-alternatives": {"type": "object", "properties": {"upper": {"type": "string", "pattern": "^" + "(A|A)" * 30 + "$"}}},
    # ECMA-262 reading: "$" is the very end (Python's re would also match before a final newline)
    "dollar": {"type": "object", "properties": {"upper": {"type": "string", "pattern": "^[A-Z]+$"}}},
    # 100 levels of nesting: past feeler._limits.MAX_DEPTH
    "deep": _nested_output(100),
}


class HostileOutput(Structured):
    """``shout`` declares the outputSchema named by argv[2] (:data:`HOSTILE_OUTPUTS`); its ``upper`` is 40
    letters and one near miss: ``A`` * 40 + ``!`` for the patterns, ``SHOUT`` and a newline for ``dollar``."""

    def __init__(self) -> None:
        super().__init__()
        self.tools = [{**SHOUT_TOOL, "outputSchema": HOSTILE_OUTPUTS[sys.argv[2]]}]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        answer = super().on_tools_call(params, request_id)
        if "structuredContent" in answer:
            near_miss = "A" * 40 + "!" if sys.argv[2] != "dollar" else "SHOUT\n"
            answer["structuredContent"]["upper"] = near_miss
            answer["content"][0]["text"] = json.dumps(answer["structuredContent"])
        return answer


# -- liveness and latency ---------------------------------------------------------------------


class PingDiesAfterCall(Clean):
    """Answers tools/call, then never answers ping again (a wedged event loop, say)."""

    called = False

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self.called = True
        return self.call_echo(params)

    def on_ping(self, params: dict[str, Any]) -> dict[str, Any]:
        if self.called:
            raise NoAnswer
        return {}


class PingError(Clean):
    """Ping gets a JSON-RPC error instead of an empty result (MCP basic/utilities/ping)."""

    def on_ping(self, params: dict[str, Any]) -> dict[str, Any]:
        raise RpcError(INTERNAL_ERROR, "the worker pool is exhausted")


class Slow(Clean):
    """Every tools/call takes 0.12 s."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        time.sleep(0.12)
        return self.call_echo(params)


class Record(Clean):
    """Appends every tools/call to the file named by FEELER_CALL_LOG (to prove a dry run calls nothing)."""

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        with open(os.environ["FEELER_CALL_LOG"], "a", encoding="utf-8") as handle:
            handle.write(json.dumps(params) + "\n")
        return self.call_echo(params)


# -- the catalog ------------------------------------------------------------------------------


class ArrayRoot(Clean):
    """A tool whose inputSchema root is an array schema (MCP server/tools: type "object" at the root)."""

    def __init__(self) -> None:
        super().__init__()
        self.tools = [{**ECHO_TOOL, "inputSchema": {"type": "array", "items": {"type": "string"}}}]


class InvalidSchema(Clean):
    """A tool whose inputSchema is not a valid JSON Schema ("type": "text" is no JSON Schema type)."""

    def __init__(self) -> None:
        super().__init__()
        self.tools = [{**ECHO_TOOL, "inputSchema": {"type": "object", "properties": {"text": {"type": "text"}}}}]


class BadName(Clean):
    """A tool whose name has a space and a "!" (MCP 2025-11-25 server/tools, tool names)."""

    def __init__(self) -> None:
        super().__init__()
        self.tools = [{**ECHO_TOOL, "name": "echo text!"}]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        return self.call_echo({**params, "name": "echo"})


class TaskRequired(Clean):
    """The echo tool declares ``execution.taskSupport: "required"`` and refuses every call without a task with
    -32601 (MCP 2025-11-25 server/tools, execution; basic/utilities/tasks)."""

    def __init__(self) -> None:
        super().__init__()
        self.tools = [{**ECHO_TOOL, "execution": {"taskSupport": "required"}}]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if "task" not in params:
            raise RpcError(-32601, f"Tool {params.get('name')} requires task augmentation (taskSupport: 'required')")
        return self.call_echo(params)


# -- protocol probes --------------------------------------------------------------------------


class StrictProbes(Clean):
    """Answers malformed requests as JSON-RPC 2.0 and MCP prescribe: the clean side of probe_answer.

    A null id is an invalid request (MCP basic/index: ids MUST NOT be null; JSON-RPC 2.0 section 5.1: -32600),
    and ``arguments`` that is not an object is a malformed tools/call (MCP 2025-11-25 server/tools: -32602).
    """

    def handle(self, message: dict[str, Any]) -> None:
        if "method" in message and "id" in message and message["id"] is None:
            self.fail(None, -32600, "Invalid Request: the id must not be null")
            return
        super().handle(message)

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if "arguments" in params and not isinstance(params["arguments"], dict):
            raise RpcError(INVALID_PARAMS, "Invalid params: arguments must be an object")
        return self.call_echo(params)



class AnswersNotifications(StrictProbes):
    """Answers notifications as if they were requests (JSON-RPC 2.0 section 4.1: MUST NOT reply)."""

    def on_notification(self, method: str, params: dict[str, Any]) -> None:
        if method != "notifications/initialized":
            self.send({"jsonrpc": "2.0", "id": None, "result": {}})


class WrongMethodCode(StrictProbes):
    """Unknown methods get -32600 instead of -32601 (JSON-RPC 2.0 section 5.1)."""

    def dispatch(self, method: str, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        try:
            return super().dispatch(method, params, request_id)
        except RpcError as exc:
            if exc.code == -32601:
                raise RpcError(-32600, "Invalid Request") from None
            raise


FAULTS: dict[str, type[WireServer]] = {
    "clean": Clean,
    "jsonrpc-1.0": Answer10,
    "result-and-error": ResultAndError,
    "bad-error-object": BadErrorObject,
    "string-id": StringId,
    "no-id": NoId,
    "bad-content": BadContent,
    "accepts-anything": AcceptsAnything,
    "nogo-internal": NogoInternal,
    "nogo-wrong-code": NogoWrongCode,
    "nogo-protocol": NogoProtocol,
    "refuses-valid": RefusesValid,
    "go-internal": GoInternal,
    "always-is-error": AlwaysIsError,
    "exception-name": ExceptionName,
    "bounded": Bounded,
    "off-by-one": OffByOne,
    "leaky": Leaky,
    "output-ok": _structured("ok"),
    "output-missing": _structured("missing"),
    "output-invalid": _structured("invalid"),
    "output-unmirrored": _structured("unmirrored"),
    "output-hostile": HostileOutput,
    "ping-dies": PingDiesAfterCall,
    "ping-error": PingError,
    "slow": Slow,
    "record": Record,
    "array-root": ArrayRoot,
    "invalid-schema": InvalidSchema,
    "bad-name": BadName,
    "task-required": TaskRequired,
    "strict-probes": StrictProbes,
    "answers-notifications": AnswersNotifications,
    "wrong-method-code": WrongMethodCode,
}


if __name__ == "__main__":
    if len(sys.argv) < 2 or sys.argv[1] not in FAULTS:
        print(f"usage: faulty.py FAULT [ARG]; FAULT one of {', '.join(FAULTS)}", file=sys.stderr)
        sys.exit(2)
    main(FAULTS[sys.argv[1]])
