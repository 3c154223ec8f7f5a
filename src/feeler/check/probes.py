"""Protocol-level no-go requests (from :func:`feeler.generate.protocol_probes`) sent raw, and their check."""

from __future__ import annotations

from collections.abc import Iterator
from typing import TYPE_CHECKING, Any

from feeler.check.registry import CallContext, Problem, register
from feeler.errors import RequestTimeout, ServerExited, TargetError
from feeler.session import same_id

if TYPE_CHECKING:
    from feeler.catalog import Tool
    from feeler.check.runner import Runner, ToolStats

__all__ = ["TOOL_PROBES", "run_probes"]

#: Probes aimed at one tool; the rest concern the whole server and are sent once per run.
TOOL_PROBES = frozenset({"arguments-array", "arguments-string", "arguments-null"})
#: Probes whose unanswered line is tolerated with a warning (see probe_answer).
_SILENCE_TOLERATED = frozenset({"not-json", "batch-forbidden"})
#: Seconds to wait for a probe's answer: a clean server answers at once.
PROBE_TIMEOUT = 3.0
#: Seconds for probes that many servers leave unanswered (tolerated silence): a short, separate wait, so
#: that silence costs little; an answer from a clean server comes at once on loopback (common practice).
SILENT_PROBE_TIMEOUT = 0.75
#: The shortest such wait, and how many times the tool's slowest usual answer (p95) it lasts: a server
#: that answers a probe at all does so about as fast as it answers a call (common practice).
SILENT_PROBE_FLOOR = 0.1
SILENT_PROBE_FACTOR = 10
#: Codes a 2026-07-28 HTTP server may answer with before it reads the body (MCP 2026-07-28 streamable-http).
_HTTP_HEADER_CODES = (-32020,)


def silence_wait(stats: ToolStats) -> float:
    """How long a probe that may rightly get no answer waits: SILENT_PROBE_FACTOR times the p95 of the
    tool's answered calls so far, between SILENT_PROBE_FLOOR and SILENT_PROBE_TIMEOUT (the ceiling, also
    used before any call was answered)."""
    if not stats.durations:
        return SILENT_PROBE_TIMEOUT
    ordered = sorted(stats.durations)
    p95 = ordered[min(len(ordered) - 1, int(0.95 * len(ordered)))]
    return min(SILENT_PROBE_TIMEOUT, max(SILENT_PROBE_FLOOR, SILENT_PROBE_FACTOR * p95))


def run_probes(runner: Runner, tool: Tool, stats: ToolStats) -> None:
    from feeler.generate import protocol_probes

    silent = silence_wait(stats)
    session = runner.open()
    meta = session.meta() if session.era == "stateless" else None
    for probe in protocol_probes(runner.revision, tool.name, meta):
        per_tool = probe.name in TOOL_PROBES
        if not per_tool and probe.name in runner.server_probes_sent:
            continue
        if runner.options.dry_run:  # listed, not sent
            from feeler.check.runner import Call

            runner.report.planned.append(Call(tool.name if per_tool else None, "probe", probe.name, None, None, request=probe.text))
            runner.server_probes_sent.add(probe.name)
            continue
        ctx = CallContext("probe", tool if per_tool else None, runner.revision, runner.era, runner.settings, case=probe)
        try:
            session = runner.open()
            wait = silent if probe.silence_ok or probe.name in _SILENCE_TOLERATED else PROBE_TIMEOUT
            ctx.exchange = session.send_raw(probe.text, expect_answer=probe.expects_answer,
                                            timeout=min(session.request_timeout, wait), grace=silent)
        except RequestTimeout as exc:
            ctx.failure = exc
        except ServerExited as exc:
            ctx.failure = exc
        except TargetError as exc:
            ctx.failure = exc
        stats.probes += 1
        runner._evaluate(ctx)
        if not per_tool:
            runner.server_probes_sent.add(probe.name)
        if isinstance(ctx.failure, ServerExited) and not runner._restart():
            return


def _ids(response: Any) -> list[Any]:
    items = response if isinstance(response, list) else [response]
    return [item.get("id") for item in items if isinstance(item, dict)]


@register("probe_answer", applies_to=("probe",), reference="JSON-RPC 2.0 sections 4.1, 5, 5.1, 6; MCP <revision> basic/index")
def probe_answer(ctx: CallContext) -> Iterator[Problem]:
    """Malformed and unusual requests get the answer JSON-RPC and MCP prescribe (or none, for notifications)."""
    probe = ctx.case
    ex = ctx.exchange
    name = probe.name
    if ctx.failure is not None:
        if isinstance(ctx.failure, RequestTimeout):
            if probe.silence_ok or not probe.expects_answer:
                return
            # JSON-RPC 2.0 section 5 wants an answer even to unreadable input, but dropping such a line
            # is common practice on stdio (the official SDK does): a warning, not a finding.
            yield Problem(
                f"probe {name!r}: no answer (expected {probe.expected})",
                severity="warning" if name in _SILENCE_TOLERATED else None,
                error_class=f"{name}:silent",
            )
            return
        yield Problem(f"probe {name!r}: {ctx.failure} (expected {probe.expected})", error_class=f"{name}:failure")
        return
    if ex is None:
        return
    answered = ex.response is not None
    if not probe.expects_answer:
        if answered:
            yield Problem(f"probe {name!r}: the server answered a notification (expected no answer)", error_class=f"{name}:answered")
        return
    if not answered:
        if probe.silence_ok:
            return
        status = f" (HTTP {ex.http_status})" if ex.http_status else ""
        yield Problem(f"probe {name!r}: no JSON-RPC answer{status} (expected {probe.expected})", error_class=f"{name}:silent")
        return
    response = ex.response
    if isinstance(response, list):
        if not probe.result_ok:
            yield Problem(f"probe {name!r}: a batch answer (expected {probe.expected})", error_class=f"{name}:batch")
            return
        wanted = probe.id if isinstance(probe.id, list) else [probe.id]
        got = _ids(response)
        if sorted(map(repr, got)) != sorted(map(repr, wanted)):
            yield Problem(f"probe {name!r}: the batch answer has ids {got!r}, expected {wanted!r}", error_class=f"{name}:batch-ids")
        return
    if not isinstance(response, dict):
        yield Problem(f"probe {name!r}: the answer is not a JSON object", error_class=f"{name}:not-object")
        return
    codes = tuple(probe.codes) + (_HTTP_HEADER_CODES if ex.http_status is not None and ctx.era == "stateless" else ())
    error = response.get("error")
    if isinstance(error, dict):
        code = error.get("code")
        if code not in codes:
            yield Problem(
                f"probe {name!r}: error code {code!r} (expected {probe.expected})", error_class=f"{name}:code"
            )
        if probe.id is not None and "id" in response and response["id"] is not None and not same_id(response["id"], probe.id):
            yield Problem(f"probe {name!r}: the error's id {response['id']!r} does not echo {probe.id!r}", error_class=f"{name}:id")
        return
    if "result" in response:
        result = response["result"]
        if not probe.result_ok:
            is_error = isinstance(result, dict) and result.get("isError") is True
            # A null `arguments` read as "no arguments" is lenient, not dangerous: a warning.
            lenient = is_error or name == "arguments-null"
            yield Problem(
                f"probe {name!r}: " + ("an isError result" if is_error else "a success result") + f" (expected {probe.expected})",
                severity="warning" if lenient else None,
                error_class=f"{name}:{'is-error' if is_error else 'accepted'}",
            )
            return
        if probe.id is not None and not same_id(response.get("id"), probe.id):
            yield Problem(f"probe {name!r}: the answer's id {response.get('id')!r} does not echo {probe.id!r} exactly", error_class=f"{name}:id")
