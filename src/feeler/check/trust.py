"""Heuristics that keep findings trustworthy: what reads as a crash, what reads as a failure, and which
paths the user gave (so showing them leaks nothing).

Each heuristic is tuned on a corpus of our own texts (``tests/check/corpus/answers.json``), and the test
prints how many of each side it flags; change a pattern only with a corpus sample that shows why.
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterator
from typing import Any

from feeler.check.registry import CallContext, Problem, register

__all__ = ["crash_reason", "failure_reason", "given_path"]

#: A Python exception class named as the cause (``KeyError: 'x'``, ``ValueError(`` ...).
_EXCEPTION_NAME = re.compile(r"\b([A-Z][A-Za-z0-9_]*(?:Error|Exception))\b(?::|\()")
#: Exception names that mean a clean refusal, not a crash (pydantic's and the SDK's own).
_CLEAN_EXCEPTIONS = frozenset({"ValidationError", "ToolError"})
#: A traceback line (Python, JavaScript) inside an answer.
_TRACE_LINE = re.compile(r"Traceback \(most recent call last\)|^\s*File \"[^\"]+\", line \d+|^\s+at \S+ \(\S+:\d+:\d+\)", re.MULTILINE)
#: The official Python SDK's crash text (mcp 2.x ``UnexpectedToolError``): the tool's name and nothing
#: else, possibly chained for a nested call. A deliberate ``ToolError`` keeps its own text after a colon.
_SDK_CRASH = re.compile(r"^\s*Error executing tool [\w.-]+(?:: Error executing (?:tool|resource) \S+)*\s*$")


def crash_reason(text: str) -> str | None:
    """Why an error text reads as an unhandled exception (an error class), or None."""
    if _SDK_CRASH.match(text):
        return "sdk-crash"
    match = _EXCEPTION_NAME.search(text)
    if match and match.group(1) not in _CLEAN_EXCEPTIONS:
        return f"unhandled:{match.group(1)}"
    if _TRACE_LINE.search(text):
        return "traceback"
    return None


#: A success text that reads as a failure: it starts with an error word, or says that something failed or
#: was not found. Phrases that deny an error ("no errors", "0 failed") are removed first.
_FAILURE_START = re.compile(r"^\s*(?:error|errors|failed|failure|fatal|exception|traceback|cannot|could not|unable to)\b", re.IGNORECASE)
_FAILURE_ANY = re.compile(
    r"\b(?:not found|no such (?:file|table|column|key|user|record|directory)|failed to|has failed|"
    r"permission denied|access denied|an? (?:unexpected |internal )?error (?:occurred|has occurred)|exception:|"
    r"internal server error|is not defined|unknown (?:column|table))\b",
    re.IGNORECASE,
)
_DENIALS = re.compile(r"\b(?:no|zero|0|without) (?:errors?|failures?|exceptions?)\b|\b0 failed\b|\berrors?: 0\b", re.IGNORECASE)


def failure_reason(text: str) -> str | None:
    """The words that make a success text read as a failure, or None."""
    cleaned = _DENIALS.sub("", text)
    match = _FAILURE_START.search(cleaned) or _FAILURE_ANY.search(cleaned[:400])
    return match.group(0).strip() if match else None


def _strings(value: Any) -> Iterator[str]:
    if isinstance(value, str):
        yield value
    elif isinstance(value, dict):
        for v in value.values():
            yield from _strings(v)
    elif isinstance(value, list):
        for v in value:
            yield from _strings(v)


def given_path(path: str, given: tuple[str, ...], arguments: Any = None) -> bool:
    """Whether *path* (seen in an error) is one the user gave: under a path of the target's command line
    or working folder, or the resolved form of a string argument just sent."""
    norm = os.path.normpath(path)
    for root in given:
        if norm == root or norm.startswith(root.rstrip(os.sep) + os.sep):
            return True
    for value in _strings(arguments):
        if not value or len(value) < 2:
            continue
        sent = os.path.normpath(value)
        if norm == sent or (not os.path.isabs(value) and norm.endswith(os.sep + sent.lstrip("./" + os.sep))):
            return True
    return False


@register("failure_as_success", applies_to=("go",), severity="warning",
          reference="MCP 2025-11-25 server/tools (error handling: tool errors are reported with isError: true)")
def failure_as_success(ctx: CallContext) -> Iterator[Problem]:
    """A success result does not read as a failure ("Error: ...", "not found", "failed"): failures are isError."""
    ex = ctx.exchange
    if ex is None or not isinstance(ex.result, dict) or ex.is_error_result or ex.input_required:
        return
    for block in ex.result.get("content") or []:
        text = block.get("text") if isinstance(block, dict) else None
        if isinstance(text, str):
            reason = failure_reason(text)
            if reason:
                yield Problem(
                    f"a success result reads as a failure ({reason!r}): {text.strip()!r}; report failures "
                    "with isError: true so that clients and models can tell",
                    error_class="reads-as-failure",
                )
                return
