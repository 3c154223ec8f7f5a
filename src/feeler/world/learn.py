"""Learning values from successful answers, so later calls reach past the schema gate.

After a call the server accepted, :meth:`Learner.learn` reads the answer:

* ``structuredContent``: every scalar (string, number) with the name of the key it sits under;
* text blocks holding JSON (when there is no ``structuredContent``): the same, inside the parsed text;
* other text: identifier-like tokens (``BK-004211``, ``rec-0001``, UUIDs), path-like tokens
  (``/srv/data/notes``) and quoted names (``"Tern"``).

Each value is filed in the shared :class:`~feeler.world.values.ValuePool` (source ``learned``) under
every identifier-, path- or name-like input of the catalog (``record_id``, ``path``, ``vessel_name``;
quantities, dates and choices are left to the samplers) whose name is related (:func:`feeler.world.names.related`), with its
provenance: the tool and the place in the answer as a JSON Pointer (``list_roots
/structuredContent/roots/0``). Text tokens go to inputs of their kind (identifiers, paths, names). The
pool's bound per key bounds memory; :func:`feeler.world.apply.apply_values` keeps a value only where the
oracle accepts the arguments it makes.

:func:`listings` picks the tools of the discovery pass: read-only tools that need no arguments.
"""

from __future__ import annotations

import json
import re
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import Any

from feeler.catalog import Tool
from feeler.world.names import ID_WORDS, PATH_WORDS, identifier_like, nouns, related, words
from feeler.world.values import ValuePool

__all__ = ["Found", "Learner", "answer_values", "listings", "same_json", "value_at"]

_ID_TOKEN = re.compile(r"(?<![\w/.-])(?=[\w-]*\d)(?=[\w-]*[A-Za-z])[A-Za-z0-9]+(?:[-_][A-Za-z0-9]+)+(?![\w/-])")
_UUID = re.compile(r"\b[0-9a-fA-F]{8}-[0-9a-fA-F]{4}-[0-9a-fA-F]{4}-[0-9a-fA-F]{4}-[0-9a-fA-F]{12}\b")
_PATH_TOKEN = re.compile(r"(?<![\w.:/-])(?:~|\.{1,2})?(?:/[\w.@+-]+)+/?")
_QUOTED = re.compile(r"[\"'`“‘]([^\"'`”’\n]{1,80})[\"'`”’]")
_NAME_WORDS = frozenset({"name", "title", "label"})


def _escape(part: str) -> str:
    return part.replace("~", "~0").replace("/", "~1")


def _property_names(schema: Any, depth: int = 0) -> Iterator[str]:
    """Every property name declared anywhere in *schema* (nested objects, items, definitions, branches)."""
    if depth > 12:
        return
    if isinstance(schema, dict):
        props = schema.get("properties")
        if isinstance(props, dict):
            yield from (k for k in props if isinstance(k, str))
        for value in schema.values():
            if isinstance(value, (dict, list)):
                yield from _property_names(value, depth + 1)
    elif isinstance(schema, list):
        for item in schema:
            yield from _property_names(item, depth + 1)


def listings(tools: Iterable[Tool]) -> list[Tool]:
    """The discovery pass's tools: annotated ``readOnlyHint: true``, with no required argument."""
    out = []
    for tool in tools:
        schema = tool.input_schema
        if tool.annotations.get("readOnlyHint") is not True or not isinstance(schema, dict):
            continue
        if schema.get("required") or schema.get("minProperties"):
            continue
        out.append(tool)
    return out


class Learner:
    """Files values from answers into *pool* for the inputs of *tools*.

    :param pool: the run's value pool (shared with known values).
    :param tools: the catalog's tools; their input names decide where a value is offered.
    :param max_values: at most this many values read from one answer (bounds the cost per call).
    :param max_text: text blocks longer than this are not scanned for tokens.
    """

    def __init__(self, pool: ValuePool, tools: Iterable[Tool], *, max_values: int = 200, max_text: int = 8192) -> None:
        self.pool = pool
        self.max_values = max_values
        self.max_text = max_text
        #: (tool, input name, the tool's nouns) for every input of the catalog
        self._inputs: list[tuple[str, str, frozenset[str]]] = []
        for tool in tools:
            tool_nouns = nouns(tool.name)
            for name in dict.fromkeys(_property_names(tool.input_schema)):
                # Quantities, dates and choices are left to the samplers: only names the schema cannot
                # fill by itself (identifiers, places, names) take learned values.
                if identifier_like(name) or (words(name) and words(name)[-1] in _NAME_WORDS):
                    self._inputs.append((tool.name, name, tool_nouns))
        self._by_kind = {
            "id": [(t, n) for t, n, _ in self._inputs if identifier_like(n) and words(n)[-1] in ID_WORDS],
            "path": [(t, n) for t, n, _ in self._inputs if words(n) and words(n)[-1] in PATH_WORDS],
            "name": [(t, n) for t, n, _ in self._inputs if words(n) and words(n)[-1] in _NAME_WORDS],
        }
        self._targets: dict[tuple[str, frozenset[str]], list[tuple[str, str]]] = {}
        self.learned = 0
        #: the last answer read: (tool, result, the pool's add count after it, whether it evicted a value)
        self._last: tuple[str, Any, int, bool] | None = None

    def takes(self, tool: str) -> bool:
        """Whether *tool* has an input learned values may go into."""
        return any(t == tool for t, _, _ in self._inputs)

    def _targets_for(self, name: str, context: frozenset[str]) -> list[tuple[str, str]]:
        key = (name, context)
        found = self._targets.get(key)
        if found is None:
            found = [(t, n) for t, n, tn in self._inputs if related(n, name, context, tn)]
            if len(self._targets) < 4096:
                self._targets[key] = found
        return found

    def _file(self, targets: list[tuple[str, str]], value: Any, provenance: str) -> int:
        added = 0
        for tool, name in targets:
            added += self.pool.add(name, value, source="learned", provenance=provenance, tool=tool)
        return added

    def learn(self, tool: str, result: Any) -> int:
        """Read a successful ``tools/call`` *result* of *tool*; returns how many new values were filed.

        An answer identical to the last one read (the same tool, the same JSON: types and key order
        included), with the pool untouched since and nothing evicted then, is not read again: reading it
        would file the same values in the same order, leaving the pool as it is (a fast server often
        gives one answer to every call)."""
        last = self._last
        if last is not None and last[0] == tool and last[2] == self.pool.adds and not last[3] and same_json(last[1], result):
            return 0
        added = 0
        evictions = self.pool.evictions
        for found in answer_values(tool, result, max_values=self.max_values, max_text=self.max_text):
            targets = self._by_kind[found.kind] if found.kind else self._targets_for(found.name or "", found.context)
            if targets:
                added += self._file(targets, found.value, found.provenance(tool))
        self.learned += added
        self._last = (tool, result, self.pool.adds, self.pool.evictions != evictions)
        return added


def same_json(a: Any, b: Any) -> bool:
    """Whether two parsed JSON values are the same, types and key order included (``1`` is neither ``1.0``
    nor ``true`` here, unlike ``==``). Iterative, so any depth is fine; it stops at the first difference."""
    stack = [(a, b)]
    while stack:
        x, y = stack.pop()
        if x is y:
            continue
        kind = type(x)
        if kind is not type(y):
            return False
        if kind is dict:
            if len(x) != len(y):
                return False
            for (kx, vx), (ky, vy) in zip(x.items(), y.items()):
                if kx != ky:
                    return False
                stack.append((vx, vy))
        elif kind is list:
            if len(x) != len(y):
                return False
            stack.extend(zip(x, y))
        elif x != y:
            return False
    return True


@dataclass(frozen=True)
class Found:
    """One value in an answer.

    :param value: the value.
    :param name: the key it sits under (``None`` for a token in text).
    :param kind: ``id``, ``path`` or ``name`` for a token in text, else ``None``.
    :param context: nouns of the tool and the keys above the value (:func:`feeler.world.names.nouns`).
    :param place: JSON Pointer into the result (``/structuredContent/roots/0``, ``/content/0/text``).
    :param inner: inside a text block: a JSON Pointer into the JSON it holds, or ``#N`` (the N-th token).
    """

    value: Any
    name: str | None
    kind: str | None
    context: frozenset[str]
    place: str
    inner: str | None = None

    def provenance(self, tool: str) -> str:
        return f"{tool} {self.place}" + (f" {self.inner}" if self.inner else "")


def answer_values(tool: str, result: Any, *, max_values: int = 200, max_text: int = 8192) -> Iterator[Found]:
    """The values of a successful *result* of *tool*, in a stable order (see the module docstring)."""
    if not isinstance(result, dict) or result.get("isError") is True:
        return
    budget = [max_values]
    base = nouns(tool)
    structured = result.get("structuredContent")
    if isinstance(structured, (dict, list)):
        yield from _walk(structured, "/structuredContent", None, base, budget)
    content = result.get("content")
    if not isinstance(content, list):
        return
    for index, block in enumerate(content[:16]):
        if not isinstance(block, dict) or block.get("type") != "text" or not isinstance(block.get("text"), str):
            continue
        text: str = block["text"]
        where = f"/content/{index}/text"
        if structured is None and text[:1] in "{[" and len(text) <= 16 * max_text:
            try:
                parsed = json.loads(text)
            except ValueError:
                parsed = None
            if isinstance(parsed, (dict, list)):
                yield from _walk(parsed, where, "", base, budget)
                continue
        if len(text) <= max_text and structured is None:
            yield from _tokens(text, where, base, budget)


def value_at(result: Any, place: str, inner: str | None) -> tuple[bool, Any]:
    """Find again the value :func:`answer_values` reported at *place* / *inner* in another *result*."""
    from feeler.world.apply import get_at

    found, value = get_at(result, place)
    if not found or inner is None:
        return found, value
    if not isinstance(value, str):
        return False, None
    if inner.startswith("#"):
        tokens = list(_tokens(value, place, frozenset(), [10_000]))
        index = int(inner[1:])
        return (True, tokens[index].value) if index < len(tokens) else (False, None)
    try:
        return get_at(json.loads(value), inner)
    except ValueError:
        return False, None


def _walk(node: Any, place: str, inner: str | None, context: frozenset[str], budget: list[int]) -> Iterator[Found]:
    stack: list[tuple[Any, str, str | None, frozenset[str]]] = [(node, "", None, context)]
    while stack and budget[0] > 0:
        value, pointer, name, ctx = stack.pop()
        if isinstance(value, dict):
            for key, sub in reversed(list(value.items())):
                sub_ctx = ctx | nouns(str(key)) if isinstance(sub, (dict, list)) else ctx
                stack.append((sub, f"{pointer}/{_escape(str(key))}", str(key), sub_ctx))
        elif isinstance(value, list):
            for i in range(min(len(value), 50) - 1, -1, -1):
                stack.append((value[i], f"{pointer}/{i}", name, ctx))
        elif name is not None and not isinstance(value, bool) and (
            isinstance(value, (int, float)) or (isinstance(value, str) and 0 < len(value) <= 200)
        ):
            budget[0] -= 1
            if inner is None:
                yield Found(value, name, None, ctx, place + pointer)
            else:
                yield Found(value, name, None, ctx, place, pointer)


def _tokens(text: str, place: str, context: frozenset[str], budget: list[int]) -> Iterator[Found]:
    found: dict[str, str] = {}
    for match in _UUID.finditer(text):
        found.setdefault(match.group(0), "id")
    for match in _ID_TOKEN.finditer(text):
        found.setdefault(match.group(0), "id")
    for match in _PATH_TOKEN.finditer(text):
        token = match.group(0).rstrip("/.,;:") or match.group(0)
        if len(token) > 1:
            found.setdefault(token, "path")
    for match in _QUOTED.finditer(text):
        token = match.group(1).strip()
        if token:
            found.setdefault(token, "name")
    for index, (token, kind) in enumerate(list(found.items())[:20]):
        if budget[0] <= 0:
            return
        budget[0] -= 1
        yield Found(token, None, kind, context, place, f"#{index}")
