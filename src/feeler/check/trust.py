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

__all__ = ["crash_reason", "failure_reason", "given_path", "leaked_path"]

#: A Python exception class named as the cause (``KeyError: 'x'``, ``ValueError(`` ...).
_EXCEPTION_NAME = re.compile(r"\b([A-Z][A-Za-z0-9_]*(?:Error|Exception))\b(?::|\()")
#: Exception names that mean a clean refusal, not a crash (pydantic's and the SDK's own).
_CLEAN_EXCEPTIONS = frozenset({"ValidationError", "ToolError"})
#: A traceback line (Python, JavaScript) inside an answer.
_TRACE_LINE = re.compile(r"Traceback \(most recent call last\)|^\s*File \"[^\"]+\", line \d+|^\s+at \S+ \(\S+:\d+:\d+\)", re.MULTILINE)
#: The official Python SDK's prefix of every tool failure (mcp 2.x ``mcp.server.mcpserver.tools.base.Tool.run``):
#: a crash (``UnexpectedToolError``) is the prefix alone, possibly chained for a nested call; a deliberate
#: ``ToolError`` (and an argument validation error) keeps its own text after ``": "``. Older SDKs put the
#: crash's own ``str(exception)`` there, which is why the text after the prefix is read below.
_SDK_PREFIX = re.compile(r"^\s*Error executing tool [\w.-]+(?:: )?")
_SDK_CRASH = re.compile(r"^\s*Error executing tool [\w.-]+(?:: Error executing (?:tool|resource) \S+)*\s*$")
#: The interpreter's own wording for a programming error (the ``str()`` of an exception nobody caught), as
#: CPython 3.11 and Node 20 write it: the corpus (tests/check/corpus/answers.json) holds each text as the
#: interpreter produced it, and tests/check/test_trust_heuristics.py raises the Python ones again.
_RUNTIME_WORDING = re.compile(
    r"\b(?:unterminated character set|unterminated subpattern|nothing to repeat|bad escape|multiple repeat|"
    r"unbalanced parenthesis|look-behind requires fixed-width pattern)\b"  # re.error
    r"|\bobject has no attribute '"  # AttributeError
    r"|\bname '[^']+' is not defined"  # NameError
    r"|\bobject is not (?:subscriptable|callable|iterable)\b|\bunsupported operand type\(s\)"  # TypeError
    r"|\bcan only concatenate \w+ \(not|\bmissing \d+ required positional argument|\btakes \d+ positional arguments? but \d+ (?:was|were) given"
    r"|\bgot an unexpected keyword argument '|\bnot supported between instances of '|\bhas no len\(\)"
    r"|\b(?:list|string|tuple) index out of range\b|\b(?:float |integer )?division (?:or modulo )?by zero\b"  # IndexError, ZeroDivisionError
    r"|\binvalid literal for int\(\) with base \d+|\bcould not convert string to float\b"  # ValueError
    r"|\bExpecting (?:value|property name enclosed in double quotes|',' delimiter|':' delimiter): line \d+ column \d+"  # json
    r"|\bmaximum recursion depth exceeded\b|\bNo module named '"
    r"|\bCannot read propert(?:y|ies) of (?:undefined|null)\b|\bis not a function\b|\bUnexpected end of JSON input\b"  # JavaScript
    r"|\bin JSON at position \d+|\bInvalid regular expression: /|\bReduce of empty array with no initial value\b"
)
#: What a ``KeyError`` or a JavaScript ``ReferenceError`` says once its class name is gone: a quoted key
#: alone (``'berth'``), or ``name is not defined`` as the whole text.
_BARE_EXCEPTION = re.compile(r"^\s*(?:'[^'\n]{1,80}'|\"[^\"\n]{1,80}\"|[A-Za-z_$][\w$.]* is not defined)\s*$")


def crash_reason(text: str) -> str | None:
    """Why an error text reads as an unhandled exception (an error class), or None.

    ``sdk-crash``: the SDK's text for an exception the tool did not expect; ``unhandled:NAME``: an exception
    class named as the cause; ``traceback``: a traceback line; ``exception-text``: the interpreter's own
    wording (``unterminated character set``, ``'NoneType' object has no attribute``...) or a bare key, with
    or without the SDK's prefix. A deliberate refusal (``Error executing tool NAME: nights must be 1 to 14``)
    is none of these.
    """
    if _SDK_CRASH.match(text):
        return "sdk-crash"
    match = _EXCEPTION_NAME.search(text)
    if match and match.group(1) not in _CLEAN_EXCEPTIONS:
        return f"unhandled:{match.group(1)}"
    if _TRACE_LINE.search(text):
        return "traceback"
    rest = _SDK_PREFIX.sub("", text, count=1)
    if _RUNTIME_WORDING.search(rest) or _BARE_EXCEPTION.match(rest):
        return "exception-text"
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


def failure_reason(text: str, arguments: Any = None) -> str | None:
    """The words that make a success text read as a failure, or None.

    Wording that only repeats a string the caller sent is not counted (a demo tool asked for
    ``messageType: "error"`` that answers "Error: Operation failed" did what it was asked).
    """
    cleaned = _DENIALS.sub("", text)
    starts = [m for m in [_FAILURE_START.search(cleaned)] if m]
    matches = [*starts, *_FAILURE_ANY.finditer(cleaned[:400])]
    if not matches:
        return None  # the common case: no failure wording, so the strings sent need not be read
    sent = [v.lower() for v in _strings(arguments) if len(v.strip()) >= 3]
    for match in matches:
        words = match.group(0).strip()
        if not any(re.search(rf"(?<!\w){re.escape(words.lower())}(?!\w)", value) for value in sent):
            return words
    return None


def _strings(value: Any) -> Iterator[str]:
    """Every string inside a JSON value (bounded by its size: each node is visited once)."""
    stack = [value]
    while stack:
        item = stack.pop()
        if isinstance(item, str):
            yield item
        elif isinstance(item, dict):
            stack.extend(item.values())
        elif isinstance(item, list):
            stack.extend(item)


def _related(path: str, base: str) -> bool:
    """*path* is *base*, under it, or one of its folders (a part of what the user gave)."""
    if path == base:
        return True
    if base == os.sep:
        return False  # "/" sent or given does not make every path a given one
    return path.startswith(base.rstrip(os.sep) + os.sep) or base.startswith(path.rstrip(os.sep) + os.sep)


#: Characters that continue a path (as the no_leaks pattern reads one).
_PATH_CHAR = re.compile(r"[\w.@+-]")


def _follows(shown: str, value: str) -> bool:
    """The sent *value* (made normal, leading ``./`` and ``../`` removed) is written after one of the
    slashes of *shown* (the path and the text after it), ending where a path component ends."""
    tail = os.path.normpath(value) if value.strip() else ""
    while tail.startswith(("../", "./")) or tail in ("..", "."):
        tail = tail[3:] if tail.startswith("../") else tail[2:] if tail.startswith("./") else ""
    if not tail or os.path.isabs(tail):
        return False
    for slash in (i for i, c in enumerate(shown) if c == os.sep):
        rest = shown[slash + 1:]
        if rest.startswith(tail):
            after = rest[len(tail):len(tail) + 1]
            if not after or after == os.sep or not _PATH_CHAR.match(after):
                return True
    return False


def given_path(path: str, given: tuple[str, ...], arguments: Any = None, after: str = "") -> bool:
    """Whether *path* (seen in an error, followed there by the text *after*) is one the user gave.

    Given: a path of the target's command line or working folder, a path under one of them or one of their
    folders; the resolved form of a string argument just sent (absolute, or relative to a given folder:
    equal, under it, or one of its folders); or a path in which the sent value follows one of the slashes
    (``<the server's root>/<the value sent>``, also when the value holds a space the path stops at).
    """
    norm = os.path.normpath(path)
    roots = [os.path.normpath(g) for g in given]
    if any(_related(norm, root) for root in roots):
        return True
    shown = (path + after, norm + after)
    for value in _strings(arguments):
        if os.path.isabs(value):
            resolved = {os.path.normpath(value)}
            if "\x00" not in value:  # no file name holds NUL (realpath would raise): nothing to resolve
                resolved.add(os.path.realpath(value))
        else:
            resolved = {os.path.normpath(os.path.join(root, value)) for root in roots}
        if any(_related(norm, r) for r in resolved) or any(_follows(text, value) for text in shown):
            return True
    return False


#: An absolute path as errors show one: under a well-known root, or any absolute source file (Windows too).
_ABS_PATH = re.compile(
    r"(?<![\w.~:/])("
    r"/(?:home|Users|usr|opt|var|srv|root|app|tmp|etc|mnt|workspace)/[\w.@+-]+(?:/[\w.@+-]+)+"  # well-known roots
    r"|/[\w.@+-]+(?:/[\w.@+-]+)+\.(?:py|pyc|js|mjs|cjs|ts|java|go|rb|php|rs|cs)\b"  # any absolute source file
    r"|[A-Za-z]:\\\\?(?:[\w .-]+\\\\?)+)"
)


def leaked_path(text: str, given: tuple[str, ...], arguments: Any = None) -> str | None:
    """The first absolute path in *text* that the user did not give (see :func:`given_path`), or None."""
    for match in _ABS_PATH.finditer(text):
        if not given_path(match.group(0), given, arguments, text[match.end():match.end() + 200]):
            return match.group(0)
    return None


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
            reason = failure_reason(text, getattr(ctx.case, "arguments", None))
            if reason:
                yield Problem(
                    f"a success result reads as a failure ({reason!r}): {text.strip()!r}; report failures "
                    "with isError: true so that clients and models can tell",
                    error_class="reads-as-failure",
                )
                return
