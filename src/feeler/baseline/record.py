"""Recorded outputs: the results of pinned go cases, stored beside the approved catalog.

The cases are the first boundary go cases of each tool's input schema (deterministic: the same
arguments every run). Only tools that say they change nothing (``readOnlyHint: true``) are recorded
by default, because calling the others would change the server's state and make the next run's
outputs differ for reasons that are not a release; name more tools (or ``"*"``: every tool that is
not annotated destructive) with ``record_tools`` in ``[tool.feeler]`` or ``--record-tools``.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from fnmatch import fnmatchcase
from typing import Any

from feeler.catalog import Catalog, Tool
from feeler.errors import SchemaProblem, TargetError
from feeler.redact import Redactor, redactor_for
from feeler.session import Session

__all__ = ["DEFAULT_PER_TOOL", "pinned_arguments", "record_outputs", "recordable", "rerun_records"]

DEFAULT_PER_TOOL = 3


def recordable(tool: Tool, patterns: Iterable[str] = ()) -> bool:
    """Whether *tool*'s outputs are recorded: read-only tools, or tools matching *patterns*
    (never one annotated destructive)."""
    if tool.destructive:
        return False
    if tool.annotations.get("readOnlyHint") is True:
        return True
    return any(fnmatchcase(tool.name, p) for p in patterns)


def pinned_arguments(tool: Tool, *, per_tool: int = DEFAULT_PER_TOOL, seed: int = 0) -> list[Any]:
    """The pinned go cases of *tool*: its first *per_tool* boundary go cases (distinct), smallest first."""
    from feeler.generate import go_cases

    try:
        cases = go_cases(tool.input_schema, seed=seed)
    except SchemaProblem:
        return []
    out: list[Any] = []
    for case in cases:
        if case.arguments not in out:
            out.append(case.arguments)
        if len(out) >= per_tool:
            break
    return out


def _clean(result: Any) -> Any:
    """The part of a result that belongs in a baseline: ``_meta`` (server stamps) is dropped."""
    if isinstance(result, dict):
        return {k: v for k, v in result.items() if k != "_meta"}
    return result


def _call(session: Session, tool: str, arguments: Any, redactor: Redactor) -> dict[str, Any]:
    try:
        ex = session.call_tool(tool, arguments)
    except TargetError as exc:
        return {"tool": tool, "arguments": arguments, "result": {"feelerFailure": type(exc).__name__}}
    if ex.error is not None:
        return {"tool": tool, "arguments": arguments, "result": {"error": {"code": ex.error.get("code")}}}
    # Results (isError texts too) redacted, and paths under the project, home and server folders written relatively, so the
    # baseline neither leaks nor depends on where it was checked out.
    return {"tool": tool, "arguments": arguments, "result": redactor.paths(_clean(ex.result))}


def record_outputs(
    session: Session,
    catalog: Catalog,
    *,
    tools: Iterable[str] = (),
    per_tool: int = DEFAULT_PER_TOOL,
    seed: int = 0,
    redactor: Redactor | None = None,
) -> list[dict[str, Any]]:
    """Call every recordable tool with its pinned arguments; return ``{tool, arguments, result}`` records.

    Error answers keep only their code (messages often carry volatile details); results, isError ones too,
    pass through *redactor* (default :func:`feeler.redact.redactor_for`): secrets masked, paths relative.
    """
    red = redactor or redactor_for()
    patterns = list(tools)
    records = []
    for tool in catalog.tool_list():
        if not recordable(tool, patterns):
            continue
        for arguments in pinned_arguments(tool, per_tool=per_tool, seed=seed):
            records.append(_call(session, tool.name, arguments, red))
    return records


def rerun_records(
    session: Session, records: Iterable[Mapping[str, Any]], *, redactor: Redactor | None = None
) -> list[dict[str, Any]]:
    """Call each recorded case again with the same arguments, for comparison with the baseline
    (through the same redaction as :func:`record_outputs`)."""
    red = redactor or redactor_for()
    return [_call(session, str(r["tool"]), r.get("arguments"), red) for r in records]
