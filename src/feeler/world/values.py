"""A bounded pool of argument values with their provenance.

Values are filed under a *key*: a property name (offered wherever a property of that name appears in a
tool's arguments) or a JSON Pointer into the arguments (``/owner/email``; ``$.owner.email`` is accepted
and converted), optionally limited to one tool. The pool does not judge values: whoever takes a value
out puts it into arguments and keeps it only if the oracle (``jsonschema``) accepts the result.

Memory is bounded: each key keeps at most ``per_key`` values (the newest win; values the user gave,
source ``known``, are never evicted).
"""

from __future__ import annotations

import re
from collections import OrderedDict
from dataclasses import dataclass
from typing import Any

from feeler._json import canonical_dumps

__all__ = ["SOURCES", "Value", "ValuePool", "pointer_of"]

#: Where a value came from, most trusted first (the order values are offered in).
SOURCES = ("known", "schema", "chain", "learned")

_DOLLAR_PART = re.compile(r"\.([^.\[\]]+)|\[(\d+)\]|\[['\"]([^'\"]+)['\"]\]")


def pointer_of(key: str) -> str | None:
    """*key* as a JSON Pointer when it names a place (``/a/b`` or ``$.a.b``/``$.a[0]``), else ``None``."""
    if key.startswith("/") or key == "":
        return key
    if key == "$":
        return ""
    if not key.startswith("$"):
        return None
    rest, parts, pos = key[1:], [], 0
    while pos < len(rest):
        match = _DOLLAR_PART.match(rest, pos)
        if match is None:
            raise ValueError(f"{key!r} is not a JSON path of the form $.a.b or $.a[0]")
        part = next(g for g in match.groups() if g is not None)
        parts.append(part.replace("~", "~0").replace("/", "~1"))
        pos = match.end()
    return "".join("/" + p for p in parts)


@dataclass(frozen=True)
class Value:
    """One value and where it came from.

    :param value: the JSON value.
    :param source: one of :data:`SOURCES`.
    :param provenance: a short human description (``"--value root=..."``,
        ``"list_roots /structuredContent/roots/0"``).
    """

    value: Any
    source: str
    provenance: str


class ValuePool:
    """Values by key (property name or JSON Pointer), optionally per tool; bounded per key."""

    def __init__(self, per_key: int = 16) -> None:
        if per_key < 1:
            raise ValueError(f"per_key={per_key!r} must be at least 1")
        self.per_key = per_key
        #: (tool or None, key) -> canonical JSON -> Value, oldest first
        self._values: dict[tuple[str | None, str], OrderedDict[str, Value]] = {}
        #: how many times :meth:`add` ran, and how many values it evicted (a learner skips an answer
        #: identical to the last one it read only while nothing else touched the pool: feeler.world.learn)
        self.adds = 0
        self.evictions = 0

    def add(self, key: str, value: Any, *, source: str, provenance: str, tool: str | None = None) -> bool:
        """File *value* under *key* (a property name, or a JSON Pointer / ``$.`` path); True when new.

        :raises ValueError: *source* is not one of :data:`SOURCES`, or *key* is a malformed ``$.`` path.
        """
        if source not in SOURCES:
            raise ValueError(f"source={source!r} must be one of {SOURCES}")
        place = pointer_of(key)
        slot = self._values.setdefault((tool, place if place is not None else key), OrderedDict())
        text = canonical_dumps(value)
        self.adds += 1
        if text in slot:
            slot.move_to_end(text)
            return False
        slot[text] = Value(value, source, provenance)
        while len(slot) > self.per_key:
            victim = next((k for k, v in slot.items() if v.source != "known"), None)
            if victim is None:
                break
            del slot[victim]
            self.evictions += 1
        return True

    def values_for(self, tool: str, pointer: str, name: str | None = None) -> list[Value]:
        """Values offered at *pointer* in *tool*'s arguments (property *name* there), most specific first:
        the tool's own pointer, the tool's own name, any tool's pointer, any tool's name; within each, by
        :data:`SOURCES` order and then newest first."""
        out: list[Value] = []
        seen: set[str] = set()
        keys = [(tool, pointer), (tool, name), (None, pointer), (None, name)]
        for key in keys:
            if key[1] is None or key not in self._values:
                continue
            slot = self._values[key]
            ranked = sorted(reversed(list(slot.items())), key=lambda kv: SOURCES.index(kv[1].source))
            for text, value in ranked:
                if text not in seen:
                    seen.add(text)
                    out.append(value)
        return out

    def keys(self) -> list[tuple[str | None, str]]:
        """Every (tool, key) that holds a value."""
        return [k for k, slot in self._values.items() if slot]

    def __len__(self) -> int:
        return sum(len(slot) for slot in self._values.values())
