"""The built-in checks, one small generator each. Each names the rule it enforces.

Codes and shapes come from JSON-RPC 2.0 (section 5: response object; 5.1: error object) and the MCP
specification revision pages named in each docstring.
"""

from __future__ import annotations

import functools
import json
import re
import typing
from collections.abc import Iterator
from typing import Any

from feeler.check.registry import CallContext, Problem, register
from feeler.session import same_id

__all__: list[str] = []

PARSE_ERROR, INVALID_REQUEST, METHOD_NOT_FOUND, INVALID_PARAMS, INTERNAL_ERROR = -32700, -32600, -32601, -32602, -32603


def _response(ctx: CallContext) -> dict[str, Any] | None:
    ex = ctx.exchange
    return ex.response if ex is not None and isinstance(ex.response, dict) else None


def _texts(result: Any) -> list[str]:
    """The text of every text block of a tool result."""
    if not isinstance(result, dict) or not isinstance(result.get("content"), list):
        return []
    return [b["text"] for b in result["content"] if isinstance(b, dict) and isinstance(b.get("text"), str)]


def _error_texts(ctx: CallContext) -> list[str]:
    """What the server said when it refused: the error object, or the text of an ``isError`` result."""
    ex = ctx.exchange
    if ex is None:
        return []
    if ex.error is not None:
        out = [str(ex.error.get("message", ""))]
        if "data" in ex.error:
            out.append(json.dumps(ex.error["data"], ensure_ascii=False))
        return out
    return _texts(ex.result) if ex.is_error_result else []


# -- preconditions (register(..., when=...)): each is the guard its check starts with -------------------


def _refused(ctx: CallContext) -> bool:
    """The answer is an error or an ``isError`` result (what _error_texts reads)."""
    ex = ctx.exchange
    return ex is not None and (ex.error is not None or ex.is_error_result)


def _failed_or_refused(ctx: CallContext) -> bool:
    return ctx.failure is not None or _refused(ctx)


def _has_result(ctx: CallContext) -> bool:
    ex = ctx.exchange
    return ex is not None and isinstance(ex.result, dict)


def _pointer(path: str | None) -> str:
    from feeler._json import to_pointer

    try:
        return to_pointer(path) or ""
    except ValueError:
        return str(path)


def _where(ctx: CallContext) -> str:
    if ctx.keyword:
        return f" (keyword {ctx.keyword!r} at {_pointer(ctx.path)!r})"
    return ""


# -- JSON-RPC envelope --------------------------------------------------------------------------


@register("envelope", applies_to=("go", "no-go", "probe", "alive"), reference="JSON-RPC 2.0 section 5, 5.1")
def envelope(ctx: CallContext) -> Iterator[Problem]:
    """Every answer is a JSON-RPC 2.0 response: version, echoed id, exactly one of result/error, typed error."""
    ex = ctx.exchange
    msg = _response(ctx)
    if ex is None:
        return
    if ex.response is None:  # an unreadable answer ended the exchange: only what the session saw is judged
        yield from _stream_violations(ex)
        return
    if msg is None:
        if not isinstance(ex.response, list):
            yield Problem(f"the answer is not a JSON object: {json.dumps(ex.response)[:120]}", error_class="not-object")
        return
    if msg.get("jsonrpc") != "2.0":
        yield Problem(f'"jsonrpc" is {msg.get("jsonrpc")!r}, not "2.0"', error_class="jsonrpc-version")
    has_result, has_error = "result" in msg, "error" in msg
    if has_result == has_error:
        yield Problem("the answer must carry exactly one of result and error", error_class="result-xor-error")
    if "id" not in msg:
        yield Problem("the answer has no id", error_class="missing-id")
    elif ex.request_id is not None and not same_id(msg["id"], ex.request_id) and not (msg["id"] is None and has_error):
        yield Problem(
            f"the answer's id {msg['id']!r} does not echo the request id {ex.request_id!r} (type included)",
            error_class="id-echo",
        )
    if has_error:
        err = msg["error"]
        if not isinstance(err, dict):
            yield Problem("error is not an object", error_class="error-object")
            return
        if not isinstance(err.get("code"), int) or isinstance(err.get("code"), bool):
            yield Problem(f"error.code {err.get('code')!r} is not an integer", error_class="error-code-type")
        if not isinstance(err.get("message"), str):
            yield Problem(f"error.message {err.get('message')!r} is not a string", error_class="error-message-type")
    yield from _stream_violations(ex)


def _stream_violations(ex: Any) -> Iterator[Problem]:
    """What the session saw on the stream besides the answer: lines that are not JSON, not JSON-RPC or not
    UTF-8 (MCP basic/transports "stdio": only UTF-8 MCP messages on stdout), and messages it cannot read."""
    for violation in ex.violations:
        if violation.kind in ("not-json", "not-jsonrpc", "not-utf8", "unreadable"):
            yield Problem(f"the server wrote {violation.message}: {violation.text[:80]!r}", error_class=violation.kind)


# -- result shape ---------------------------------------------------------------------------------


@functools.lru_cache(maxsize=64)
def _shape_validator(method: str, revision: str) -> Any:
    """The pydantic validator of *method*'s result at *revision* (mcp-types' surface), built once; None
    when mcp-types does not cover the pair (nothing to compare with)."""
    from mcp_types import methods  # the reference for message shapes, per revision
    from pydantic import TypeAdapter

    surface = methods.SERVER_RESULTS.get((method, revision))
    if surface is None:
        return None
    members = typing.get_args(surface)
    final = [m for m in members if getattr(m, "__name__", "") != "InputRequiredResult"]
    # mcp-types' 2026 surface is CallToolResult | InputRequiredResult, and InputRequiredResult (all fields
    # optional, extra ignored) takes any object: a final result must match the non-interim members alone.
    if members and final and len(final) < len(members):
        surface = final[0] if len(final) == 1 else typing.Union[tuple(final)]  # noqa: UP007
    return TypeAdapter(surface)


def _shape_errors(method: str, revision: str, result: Any) -> list[str]:
    form = _text_form(result)
    if form is not None:  # the common answer: its form's verdict, when mcp-types gave it already
        known = _TEXT_FORM_VERDICTS.get((method, revision, form))
        if known is not None:
            return list(known)
    from pydantic import ValidationError

    if isinstance(result, dict) and result.get("resultType") == "input_required":
        from mcp_types import methods

        surface = methods.SERVER_RESULTS.get((method, revision))
        if surface is None:
            return []
        try:
            methods.validate_server_result(method, revision, result)
        except ValidationError as exc:
            return [f"{'.'.join(str(p) for p in e['loc'])}: {e['msg']}" for e in exc.errors()[:3]]
        except (KeyError, ValueError):
            return []
        return []
    validator = _shape_validator(method, revision)
    if validator is None:
        return []
    try:
        validator.validate_python(result, by_name=False)
    except ValidationError as exc:
        errors = [f"{'.'.join(str(p) for p in e['loc'])}: {e['msg']}" for e in exc.errors()[:3]]
    else:
        errors = []
    if form is not None and len(_TEXT_FORM_VERDICTS) < 256:
        _TEXT_FORM_VERDICTS[(method, revision, form)] = tuple(errors)
    return errors


#: mcp-types' verdict per (method, revision, text form): see _text_form
_TEXT_FORM_VERDICTS: dict[tuple[str, str, tuple[int, Any]], tuple[str, ...]] = {}


def _text_form(result: Any) -> tuple[int, Any] | None:
    """The form of the most common tool result, text blocks only: ``{"content": [{"type": "text", "text":
    "..."}, ...]}`` with or without a boolean ``isError``, nothing else. mcp-types constrains ``text`` to
    be a string and nothing more (TextContent), so every result of one form gets the same verdict, and
    the runner asks pydantic once per form and revision. The form is the number of blocks and the
    ``isError`` value (None when absent); None for any other result (validated as it is)."""
    if type(result) is not dict:
        return None
    size = len(result)
    is_error = result.get("isError")
    if not (size == 1 or (size == 2 and type(is_error) is bool)):
        return None
    content = result.get("content")
    if type(content) is not list:
        return None
    for block in content:
        if type(block) is not dict or len(block) != 2 or block.get("type") != "text" or type(block.get("text")) is not str:
            return None
    return len(content), is_error


@register("result_shape", applies_to=("go", "no-go"), reference="MCP <revision> server/tools (CallToolResult); mcp-types",
          when=_has_result)
def result_shape(ctx: CallContext) -> Iterator[Problem]:
    """A tools/call result has the shape the negotiated protocol version defines (content blocks, isError, resultType)."""
    ex = ctx.exchange
    if ex is None or not isinstance(ex.result, dict) or ex.input_required:
        return
    for error in _shape_errors("tools/call", ctx.revision, ex.result):
        yield Problem(f"the result does not match CallToolResult at {ctx.revision}: {error}", error_class="shape")


# -- go and no-go verdicts --------------------------------------------------------------------------


@register("go_enters", applies_to=("go",), reference="MCP 2025-11-25 server/tools (error handling)", when=_refused)
def go_enters(ctx: CallContext) -> Iterator[Problem]:
    """A go case enters: arguments the input schema accepts are accepted: -32602 on a go case means schema and code disagree."""
    ex = ctx.exchange
    if ex is None:
        return
    if ex.error is not None and ex.error.get("code") == INVALID_PARAMS:
        yield Problem(
            f"valid arguments{_where(ctx)} were refused as invalid params: {str(ex.error.get('message'))}",
            error_class="refused-valid",
        )
    elif ex.error is not None and ex.error.get("code") == INTERNAL_ERROR:
        yield Problem(f"valid arguments{_where(ctx)} caused an internal error: {str(ex.error.get('message'))}", error_class="internal-error")
    elif ex.is_error_result and ctx.settings.strict_go:
        text = " ".join(_texts(ex.result))
        yield Problem(f"valid arguments{_where(ctx)} got isError: {text}", error_class="is-error")


@register("bounds_honoured", applies_to=("go",), reference="JSON Schema 2020-12 validation sections 6.2-6.4",
          when=lambda ctx: ctx.base == "entered")
def bounds_honoured(ctx: CallContext) -> Iterator[Problem]:
    """A value exactly on a bound the schema allows (minimum, maxLength...) is not refused with ``isError``
    when the same arguments one step inside the bound (the base) are accepted."""
    from feeler.world.anchor import BOUND_KEYWORDS

    ex = ctx.exchange
    if ex is None or ctx.case is None or ctx.base != "entered" or ctx.keyword not in BOUND_KEYWORDS:
        return
    if ex.is_error_result:
        text = " ".join(_texts(ex.result))
        yield Problem(
            f"the value on the bound{_where(ctx)} is allowed by the schema but the tool refused it, "
            f"while it accepted the same arguments just inside the bound: {text}",
            error_class=f"bound:{ctx.keyword}",
        )


@register("nogo_stops", applies_to=("no-go",), reference="MCP 2025-11-25 server/tools (error handling); JSON-RPC 2.0 section 5.1")
def nogo_stops(ctx: CallContext) -> Iterator[Problem]:
    """A no-go case is stopped: arguments the input schema forbids are rejected cleanly: -32602 or ``isError: true``, never success or -32603."""
    ex = ctx.exchange
    if ex is None:
        return
    if ex.error is not None:
        code = ex.error.get("code")
        if code == INTERNAL_ERROR:
            yield Problem(f"invalid arguments{_where(ctx)} caused an internal error (-32603) instead of a clean rejection", error_class="internal-error")
        elif code != INVALID_PARAMS:
            yield Problem(f"invalid arguments{_where(ctx)} were rejected with code {code!r}; expected -32602 or isError", error_class="wrong-code")
        return
    if isinstance(ex.result, dict) and not ex.is_error_result and not ex.input_required:
        yield Problem(
            f"the server accepted arguments that break the schema{_where(ctx)}: it does not enforce "
            f"{ctx.keyword!r}" if ctx.keyword else "the server accepted arguments that break the schema",
            error_class="accepted-invalid",
        )


@register("no_crash", applies_to=("go", "no-go"), reference="common practice: a tool reports failures, it does not crash",
          when=_failed_or_refused)
def no_crash(ctx: CallContext) -> Iterator[Problem]:
    """A call never ends in an unhandled exception: no exception class, traceback line, SDK crash text
    ("Error executing tool NAME" alone) or interpreter wording ("unterminated character set", "object has
    no attribute") in an error or an isError result, no exit, no hang."""
    from feeler.check.trust import crash_reason

    if ctx.failure is not None:
        kind = type(ctx.failure).__name__
        what = {"RequestTimeout": "hung (no answer in time)", "ServerExited": "made the server exit"}.get(kind, f"failed ({kind})")
        hint = ""
        if kind == "RequestTimeout" and ctx.kind == "go":  # a tool may be slow by design for what the schema allows
            hint = ("; if the tool is slow by design for these arguments, bound them in the schema (maximum, maxLength...), "
                    "give a value (--value TOOL:PROPERTY=JSON) or a longer --timeout")  # fmt: skip
        yield Problem(f"the call {what}{_where(ctx)}: {ctx.failure}{hint}", error_class=kind)
        return
    for text in _error_texts(ctx):
        reason = crash_reason(text)
        if reason:
            what = {"sdk-crash": "crashed (the SDK's text for an unexpected exception)", "traceback": "crashed (a traceback)",
                    "exception-text": "raised an unhandled exception (the interpreter's own wording)"}
            yield Problem(
                f"the tool {what.get(reason, 'raised an unhandled ' + reason.partition(':')[2])}{_where(ctx)}: {text.strip()}",
                error_class=reason,
            )
            return


# -- leaks ------------------------------------------------------------------------------------------

_TRACES = {
    "python-traceback": re.compile(r"Traceback \(most recent call last\)|File \"[^\"]+\", line \d+"),
    "javascript-stack": re.compile(r"\bat (?:[\w.$<>\[\] ]+ )?\(?(?:file://)?[\w./\\:-]+\.(?:js|mjs|cjs|ts):\d+:\d+\)?"),
    "java-stack": re.compile(r"\bat [\w$.]+\([\w$]+\.java:\d+\)|Exception in thread \""),
    "go-panic": re.compile(r"goroutine \d+ \[|\bpanic: "),
}
@register("no_leaks", applies_to=("go", "no-go", "probe"), reference="common practice (OWASP: error handling); MCP 2025-11-25 server/tools security",
          when=_refused)
def no_leaks(ctx: CallContext) -> Iterator[Problem]:
    """Errors leak no internals: stack traces (Python, JavaScript, Java, Go), absolute file paths (but for
    those the user gave: the target's command line and working folder, the arguments sent), secrets."""
    from feeler.check.trust import leaked_path

    for text in _error_texts(ctx):
        for name, pattern in _TRACES.items():
            if pattern.search(text):
                yield Problem(f"an error shows a {name.replace('-', ' ')}{_where(ctx)}", error_class=name)
                break
        path = leaked_path(text, ctx.settings.given_paths, getattr(ctx.case, "arguments", None))
        if path:
            yield Problem(f"an error shows an absolute file path {path!r}{_where(ctx)}", error_class="absolute-path")
        for secret in ctx.settings.secrets:
            if secret and secret in text:
                yield Problem(f"an error shows the value of a secret environment variable{_where(ctx)}", error_class="secret")
                break


# -- structured output --------------------------------------------------------------------------------


@register("output_schema", applies_to=("go",), reference="MCP 2025-06-18 server/tools (output schema); JSON Schema 2020-12; jsonschema",
          when=lambda ctx: ctx.tool is not None and ctx.tool.output_schema is not None)
def output_schema(ctx: CallContext) -> Iterator[Problem]:
    """A tool with an outputSchema returns ``structuredContent`` that validates against it."""
    from feeler.check.schemas import SlowPattern, output_validator, validation_errors

    ex = ctx.exchange
    tool = ctx.tool
    if ex is None or tool is None or tool.output_schema is None or not isinstance(ex.result, dict):
        return
    if ex.is_error_result or ex.input_required:
        return
    if "structuredContent" not in ex.result:
        yield Problem("the tool declares an outputSchema but returned no structuredContent", error_class="missing")
        return
    validator = output_validator(tool.output_schema)
    if validator is None:
        return
    try:
        errors = validation_errors(validator, ex.result["structuredContent"])
    except SlowPattern as exc:  # feeler.check.schemas: matching has a time budget, so this is a finding, not a hang
        yield Problem(
            f"matching the outputSchema's pattern {exc.pattern[:80]!r} against structuredContent took over "
            f"{exc.budget:g}s (catastrophic backtracking); rewrite the pattern so a near miss fails fast",
            error_class="slow-pattern",
        )
        return
    except RecursionError:
        yield Problem("structuredContent nests too deeply to be validated against the outputSchema", error_class="too-deep")
        return
    if errors:
        first = errors[0]
        from feeler._json import json_pointer

        where = json_pointer(first.absolute_path)
        yield Problem(
            f"structuredContent breaks the outputSchema at instanceLocation {where!r} (keywordLocation "
            f"{json_pointer(first.absolute_schema_path)!r}): {first.message}",
            error_class=f"invalid:{first.validator}",
        )


@register("output_mirrored", applies_to=("go",), severity="warning", reference="MCP 2025-06-18 server/tools (structured content): SHOULD",
          when=lambda ctx: _has_result(ctx) and "structuredContent" in ctx.exchange.result)  # type: ignore[union-attr]
def output_mirrored(ctx: CallContext) -> Iterator[Problem]:
    """``structuredContent`` is also given as serialized JSON in a text block (a SHOULD)."""
    ex = ctx.exchange
    if ex is None or not isinstance(ex.result, dict) or "structuredContent" not in ex.result or ex.is_error_result:
        return
    wanted = ex.result["structuredContent"]
    for text in _texts(ex.result):
        try:
            if json.loads(text) == wanted:
                return
        except ValueError:
            continue
    yield Problem("structuredContent is not mirrored as JSON in a text block", error_class="not-mirrored")


# -- liveness and latency ------------------------------------------------------------------------------


@register("server_alive", applies_to=("alive",), reference="MCP 2025-11-25 basic/utilities/ping; 2026-07-28 server/discover")
def server_alive(ctx: CallContext) -> Iterator[Problem]:
    """The server still answers after each case (ping, or server/discover in 2026-07-28)."""
    if ctx.failure is not None:
        yield Problem(f"the server stopped answering after this case: {ctx.failure}", error_class=type(ctx.failure).__name__)
    elif ctx.exchange is not None and ctx.exchange.error is not None:
        yield Problem(f"the liveness request failed: {ctx.exchange.error.get('message')!r}", error_class="ping-error")


@register("latency", applies_to=("go", "no-go"), reference="common practice: a per-tool latency budget",
          when=lambda ctx: bool(ctx.settings.latency_budget))
def latency(ctx: CallContext) -> Iterator[Problem]:
    """Every call answers within the tool's latency budget (when one is configured)."""
    ex, tool = ctx.exchange, ctx.tool
    if ex is None or tool is None or ex.finished is None:
        return
    budget = ctx.settings.budget_for(tool.name)
    if budget is not None and ex.duration > budget:
        yield Problem(f"took {ex.duration:.3f}s, over the budget of {budget:g}s", error_class="over-budget")


# -- tool level ----------------------------------------------------------------------------------------


@register("gate_opens", applies_to=("tool",), reference="common practice: a tool that refuses every valid input is broken or mis-described")
def gate_opens(ctx: CallContext) -> Iterator[Problem]:
    """The gate opens: at least one of a tool's go cases enters."""
    stats = ctx.stats
    if stats is None or stats.go_calls == 0 or getattr(getattr(stats, "world", None), "hint", None):
        return  # no go case, or one hint (values_needed) says what to give instead
    if stats.go_entered == 0:
        # no count in the message: chains may call the tool again after this check (the tool's line has the counts)
        yield Problem("stopped every go case (the schema promises more than the tool accepts)", error_class="rejects-all")


@register("values_needed", applies_to=("tool",), reference="common practice: a tool that refuses every call with one message needs a value from its world")
def values_needed(ctx: CallContext) -> Iterator[Problem]:
    """When every go case of a tool is refused with the same message: one hint quoting it and naming the
    property to give a value for (``--value PROPERTY=...``), instead of one finding per refused case."""
    hint = getattr(getattr(ctx.stats, "world", None), "hint", None)
    if hint:
        yield Problem(hint, error_class="needs-value")


# -- the advertised tool itself ----------------------------------------------------------------------

_TOOL_NAME = re.compile(r"^[A-Za-z0-9_.-]{1,128}$")


@register("schema_usable", applies_to=("catalog",), reference="MCP 2025-11-25 basic/index (JSON Schema usage); JSON Schema 2020-12; jsonschema")
def schema_usable(ctx: CallContext) -> Iterator[Problem]:
    """The inputSchema is a valid JSON Schema of a known dialect, with no remote ``$ref``, rooted at an object,
    that accepts some value (a contradiction is named with its keywords and locations). The outputSchema is
    ``output_schema_valid``'s."""
    from feeler.errors import SchemaProblem
    from feeler.generate import compile_schema

    tool = ctx.tool
    if tool is None:
        return
    schema = tool.input_schema
    if not isinstance(schema, dict) or schema.get("type") != "object":
        yield Problem('the inputSchema must be an object schema with "type": "object" at its root', error_class="root-type")
    try:
        compile_schema(schema, name=tool.name)
    except SchemaProblem as exc:
        yield Problem(f"the inputSchema cannot be used: {exc}", error_class=exc.reason)
    else:
        # A problem found while making cases (no value found although no contradiction was seen up front,
        # or a pattern that ran past its time budget).
        found = getattr(ctx.stats, "schema_problem", None)
        if found:
            reason = getattr(ctx.stats, "schema_problem_reason", None) or "unsatisfiable"
            yield Problem(f"the inputSchema cannot be used: {found}", error_class=reason)
    # The outputSchema is output_schema_valid's (feeler.check.audit): one finding, with the place that is wrong.


@register("examples_valid", applies_to=("catalog",), severity="warning", reference="JSON Schema 2020-12 validation 9.5 (examples); jsonschema")
def examples_valid(ctx: CallContext) -> Iterator[Problem]:
    """Every ``examples`` entry of the inputSchema is valid against the subschema it sits in."""
    from feeler.errors import SchemaProblem
    from feeler.world.hints import bad_examples

    if ctx.tool is None:
        return
    try:
        bad = bad_examples(ctx.tool.input_schema)
    except SchemaProblem:
        return  # schema_usable reports it
    for location, value, message in bad:
        yield Problem(f"the example {value!r} at {location} breaks its own schema: {message[:160]}", error_class=f"example:{location}")


@register("tool_name", applies_to=("catalog",), severity="warning", reference="MCP 2025-11-25 server/tools (tool names, SHOULD)")
def tool_name(ctx: CallContext) -> Iterator[Problem]:
    """Tool names are 1 to 128 characters of A-Z, a-z, 0-9, ``_``, ``-`` and ``.`` (a SHOULD since 2025-11-25)."""
    if ctx.tool is not None and not _TOOL_NAME.match(ctx.tool.name):
        yield Problem(f"tool name {ctx.tool.name!r} does not follow the naming guidance", error_class="name")
