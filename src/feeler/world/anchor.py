"""Verdicts anchored on calls the server accepted.

A refusal proves nothing about a keyword unless the same arguments, with that keyword intact, were
accepted: a server that refuses every call for another reason (an unknown root, a missing record)
refuses the no-go cases too. So, per tool, :class:`ToolWorld` keeps the go arguments that *entered*
(the server accepted them) and judges:

* a no-go case built from an entered base (the same arguments except at the broken keyword's place)
  that is refused is **stopped**: the keyword is enforced;
* a refused no-go case with no entered base is **unattributed**: not a pass;
* a no-go case the server accepts has **entered**: the finding (whatever its base).

For a bound (``bounds_honoured``), :func:`inside_value` gives the base of an on-bound go case: the same
arguments with the value one step inside the bound; only when that base enters and the on-bound value is
refused does the check report.
"""

from __future__ import annotations

import math
import re
from collections import Counter
from dataclasses import dataclass, field
from typing import Any

from feeler._json import canonical_dumps
from feeler.world.apply import case_source, get_at, put_at
from feeler.world.values import pointer_of

__all__ = ["BOUND_KEYWORDS", "MAX_ANCHORS", "ToolWorld", "inside_arguments", "outcome", "refusal_text"]

#: Keywords whose boundary go cases sit exactly on a promised limit.
BOUND_KEYWORDS = frozenset({
    "minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum", "multipleOf",
    "minLength", "maxLength", "minItems", "maxItems",
})
#: entered go arguments kept per tool (bounded memory)
MAX_KEPT = 64
#: entered go arguments used as bases of no-go cases
MAX_ANCHORS = 2
_MAX_REFUSALS = 32
_QUOTED = re.compile(r"'[^']*'|\"[^\"]*\"|`[^`]*`")
_NUMBER = re.compile(r"-?\d+(?:\.\d+)?")
#: unquoted values a refusal often echoes: URLs, then host names, then absolute paths (common practice)
_ECHOED = (
    (re.compile(r"\b[A-Za-z][A-Za-z0-9+.-]*://[^\s'\"<>]*"), "URL"),
    (re.compile(r"\b(?:[A-Za-z0-9-]+\.)+[A-Za-z]{2,}\b"), "HOST"),
    (re.compile(r"(?<![\w.:/])/[^\s'\"<>:,;]+"), "PATH"),
)


def outcome(exchange: Any, failure: Any = None) -> str | None:
    """``entered`` (a success result), ``stopped`` (``isError`` or a JSON-RPC error other than -32603),
    ``broke`` (no answer, or -32603), or None (an interim answer such as input_required)."""
    if failure is not None or exchange is None:
        return "broke"
    if exchange.error is not None:
        return "broke" if exchange.error.get("code") == -32603 else "stopped"
    if not isinstance(exchange.result, dict) or exchange.input_required:
        return None
    return "stopped" if exchange.is_error_result else "entered"


def refusal_text(exchange: Any) -> str:
    """What the server said when it refused: the error message, or the text of an ``isError`` result."""
    if exchange is None:
        return ""
    if exchange.error is not None:
        return str(exchange.error.get("message", ""))
    content = exchange.result.get("content") if isinstance(exchange.result, dict) else None
    texts = [b.get("text", "") for b in content or [] if isinstance(b, dict) and isinstance(b.get("text"), str)]
    return " ".join(texts).strip()


def _shape(text: str) -> str:
    """A refusal message with quoted parts, URLs, host names, absolute paths and numbers blanked, so
    refusals naming the value sent ("Domain a.example is not allowed", "/x/y: outside the root") match."""
    text = _QUOTED.sub("'...'", text[:2000])
    for pattern, blank in _ECHOED:
        text = pattern.sub(blank, text)
    return _NUMBER.sub("N", text)[:300]


def inside_arguments(schema: Any, case: Any) -> Any | None:
    """The base of an on-bound go case: the same arguments, the value one step inside the bound, valid
    under the oracle; None when no such step is known for the keyword or the oracle refuses it."""
    from feeler.generate import compile_schema

    place = pointer_of(case.path) if case.path else ""
    found, value = get_at(case.arguments, place or "")
    if not found or case.keyword not in BOUND_KEYWORDS:
        return None
    for candidate in _steps(case.keyword, value):
        trial = put_at(case.arguments, place or "", candidate)
        if trial != case.arguments and compile_schema(schema).is_valid(trial):
            return trial
    return None


def _steps(keyword: str, value: Any) -> list[Any]:
    if isinstance(value, bool):
        return []
    if isinstance(value, (int, float)) and keyword == "multipleOf":
        return [value * 2, value * 3] if value else []
    if isinstance(value, (int, float)):
        up = keyword in ("minimum", "exclusiveMinimum")
        sign = 1 if up else -1
        steps = [value + sign, value + sign * 2, value + sign * 0.5]
        if isinstance(value, float):
            steps.append(math.nextafter(value, math.inf if up else -math.inf))
        return steps
    if isinstance(value, str):
        return [value + (value[-1:] or "a")] if keyword == "minLength" else [value[:-1]] if value else []
    if isinstance(value, list):
        if keyword == "minItems":
            return [value + value[-1:]] if value else []
        return [value[:-1]] if value else []
    return []


def _places(value: Any, depth: int = 0) -> int:
    """The number of places (object members and array items, nested ones included) in *value*."""
    if depth > 64:
        return 0
    if isinstance(value, dict):
        return sum(1 + _places(v, depth + 1) for v in value.values())
    if isinstance(value, list):
        return sum(1 + _places(v, depth + 1) for v in value)
    return 0


@dataclass
class ToolWorld:
    """What one tool's calls showed about its world: entered arguments, refusals, verdicts by source."""

    entered: list[Any] = field(default_factory=list)
    entered_by_source: Counter[str] = field(default_factory=Counter)
    refusals: Counter[str] = field(default_factory=Counter)
    first_refusal: dict[str, str] = field(default_factory=dict)
    #: the arguments of the first go case refused with each message shape
    first_refused: dict[str, Any] = field(default_factory=dict)
    #: go cases the tool refused with an ``isError`` result
    go_refused: int = 0
    nogo: Counter[str] = field(default_factory=Counter)
    hint: str | None = None
    _seen: set[str] = field(default_factory=set, repr=False)

    def note_go(self, case: Any, exchange: Any, failure: Any = None) -> str | None:
        """Record a go case's outcome (returned)."""
        result = outcome(exchange, failure)
        if result == "entered":
            self.entered_by_source[case_source(case) or "sampled"] += 1
            if len(self.entered) < MAX_KEPT:  # bounded: nothing kept per call once full
                text = canonical_dumps(case.arguments)
                if text not in self._seen:
                    self._seen.add(text)
                    self.entered.append(case.arguments)
        elif result == "stopped" and exchange.error is None:
            self.go_refused += 1  # refused by the tool (isError); a -32602 stays a go_enters finding
            message = refusal_text(exchange)
            shape = _shape(message)
            if shape in self.refusals or len(self.refusals) < _MAX_REFUSALS:
                self.refusals[shape] += 1
                if shape not in self.first_refusal:
                    self.first_refusal[shape], self.first_refused[shape] = message, case.arguments
        return result

    def anchors(self) -> list[Any]:
        """Up to :data:`MAX_ANCHORS` entered arguments, those with the most places first (they reach the most
        keywords), the shortest of those first (a no-go case built on it reads the most easily)."""
        ranked = sorted(self.entered, key=lambda a: (-_places(a), len(canonical_dumps(a))))
        return ranked[:MAX_ANCHORS]

    def base_of(self, case: Any) -> Any | None:
        """The entered arguments *case* differs from only at its keyword's place, if any."""
        place = pointer_of(case.path) if case.path else ""
        found, broken = get_at(case.arguments, place or "")
        if not found:
            return None
        for base in self.entered:
            try:
                if put_at(base, place or "", broken) == case.arguments:
                    return base
            except (KeyError, TypeError):
                continue
        return None

    def note_nogo(self, case: Any, exchange: Any, failure: Any = None) -> str | None:
        """Record a no-go verdict (``stopped``, ``unattributed``, ``entered``, ``broke``); returned."""
        result = outcome(exchange, failure)
        if result is None:
            return None
        verdict = "unattributed" if result == "stopped" and self.base_of(case) is None else result
        self.nogo[verdict] += 1
        return verdict

    def attributable_share(self) -> float | None:
        """Share of no-go verdicts that say something about the keyword (stopped on an entered base, or entered)."""
        judged = self.nogo["stopped"] + self.nogo["entered"] + self.nogo["unattributed"]
        return (self.nogo["stopped"] + self.nogo["entered"]) / judged if judged else None

    def summary_text(self) -> str:
        """One line for the text report: go cases entered by source, no-go verdicts, attributable share."""
        sources = ", ".join(f"{k} {v}" for k, v in sorted(self.entered_by_source.items())) or "none"
        share = self.attributable_share()
        verdicts = ", ".join(f"{self.nogo[k]} {k}" for k in ("stopped", "unattributed", "entered") if self.nogo[k])
        tail = f"; no-go: {verdicts} ({share:.0%} attributable)" if share is not None else ""
        return f"entered by source: {sources}{tail}"

    def summary(self) -> dict[str, Any]:
        """The JSON form (camelCase keys)."""
        share = self.attributable_share()
        return {
            "enteredBySource": dict(sorted(self.entered_by_source.items())),
            "noGoVerdicts": {k: self.nogo[k] for k in ("stopped", "unattributed", "entered", "broke")},
            "attributableShare": round(share, 3) if share is not None else None,
            "hint": self.hint,
        }
