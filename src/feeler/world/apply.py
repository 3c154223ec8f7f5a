"""Putting pool values into arguments: the one place a :class:`~feeler.world.values.ValuePool` meets a case.

The API is small on purpose (other parts of feeler, e.g. learning from answers, call it too)::

    from feeler.world.apply import apply_values, with_values, slots

    applied = apply_values(schema, "read_file", {"root": "x", "depth": 0}, pool, pick=3, keep=("/depth",))
    applied.arguments      # the arguments with pool values put in, each kept only if the oracle agrees
    applied.used           # ((instanceLocation, Value), ...) the values that went in
    applied.source         # the most trusted source used ("known", "schema", "chain", "learned") or None

    case = with_values(schema, "read_file", case, pool, pick=3)   # the same for a generated Case

* :func:`slots` lists the places of an instance a value can go: every property present in the
  arguments and every property the schema declares for an object that is present (found through
  ``properties``, local ``$ref``, ``allOf``/``anyOf``/``oneOf`` branches and array ``items``). Each slot
  is a JSON Pointer (``instanceLocation``) plus the property name and its subschema.
* :func:`apply_values` offers each slot the pool's values for it (``ValuePool.values_for``: the tool's
  own pointer, the tool's own name, any tool's pointer, any tool's name), picks one by *pick* (so a
  run spreads "one of these" over its cases), and keeps the substitution only if the whole arguments
  still validate (``jsonschema`` via :meth:`ToolSchema.is_valid`); otherwise the next value is tried.
  Locations in *keep* (and everything below them) are never touched: the place a boundary or
  no-go case exercises stays as generated.
* :func:`with_values` does that for a :class:`~feeler.generate.Case` and records the case's source.
  :data:`CASE_SOURCES` are the sources offered to every generated case; schema hints (``schema``) go
  only into the base cases (:func:`feeler.world.plan.base_cases`), so sampled cases keep their variety.
* :func:`case_source` reads a case's value source (``schema``, ``known``, ``learned``, ``chain``,
  ``sampled``) whatever the generator called it.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import Any

from feeler.generate import ToolSchema, compile_schema
from feeler.world.values import SOURCES, Value, ValuePool, pointer_of

__all__ = ["CASE_SOURCES", "Applied", "Slot", "apply_values", "branches", "case_source", "get_at", "put_at", "slots", "unique_slots", "with_values"]

_COMBINATORS = ("allOf", "anyOf", "oneOf")
#: the pool sources put into every boundary and sampled case
CASE_SOURCES = ("known", "chain", "learned")
#: generator names of a case's origin, mapped to the vocabulary's value sources
_GENERATED = {"boundary": "schema", "hypothesis": "sampled", "drawn": "sampled"}


@dataclass(frozen=True)
class Slot:
    """A place a value can go: ``pointer`` (``instanceLocation``), the property ``name``, its ``schema``
    (found at ``location``, a JSON Pointer into the schema document), and whether the instance has it."""

    pointer: str
    name: str
    schema: Any
    present: bool
    location: str = ""


@dataclass(frozen=True)
class Applied:
    """Arguments with pool values put in, and which values went where."""

    arguments: Any
    used: tuple[tuple[str, Value], ...] = ()

    @property
    def source(self) -> str | None:
        """The most trusted source among the values used (:data:`SOURCES` order), or None if none was."""
        found = {value.source for _, value in self.used}
        return next((s for s in SOURCES if s in found), None)


def _escape(name: str) -> str:
    return name.replace("~", "~0").replace("/", "~1")


def _parts(pointer: str) -> list[str]:
    return [p.replace("~1", "/").replace("~0", "~") for p in pointer.split("/")[1:]] if pointer else []


def get_at(instance: Any, pointer: str) -> tuple[bool, Any]:
    """``(found, value)`` at *pointer* (RFC 6901) in *instance*."""
    node = instance
    for part in _parts(pointer):
        if isinstance(node, dict) and part in node:
            node = node[part]
        elif isinstance(node, list) and part.isdigit() and int(part) < len(node):
            node = node[int(part)]
        else:
            return False, None
    return True, node


def put_at(instance: Any, pointer: str, value: Any) -> Any:
    """A copy of *instance* with *value* at *pointer*; the parent must exist (an object or a list)."""
    parts = _parts(pointer)
    if not parts:
        return value
    head, rest = parts[0], "".join("/" + _escape(p) for p in parts[1:])
    if isinstance(instance, dict):
        copy = dict(instance)
        copy[head] = put_at(instance[head], rest, value) if rest else value
        return copy
    if isinstance(instance, list) and head.isdigit() and int(head) < len(instance):
        items = list(instance)
        items[int(head)] = put_at(instance[int(head)], rest, value) if rest else value
        return items
    raise KeyError(pointer)


def branches(ts: ToolSchema, node: Any, location: str = "", depth: int = 0) -> Iterator[tuple[dict, str]]:
    """``(subschema, location)`` for *node* and the subschemas that apply at the same place (local
    ``$ref`` targets and ``allOf``/``anyOf``/``oneOf`` branches)."""
    if not isinstance(node, dict) or depth > 8:
        return
    yield node, location
    ref = node.get("$ref")
    if isinstance(ref, str):
        try:
            target, at = ts.resolve(ref)
        except Exception:  # noqa: BLE001 - an unusable reference: the oracle refuses whatever we would do
            target, at = None, ""
        yield from branches(ts, target, at, depth + 1)
    for key in _COMBINATORS:
        for index, branch in enumerate(node.get(key) or []):
            yield from branches(ts, branch, f"{location}/{key}/{index}", depth + 1)


def unique_slots(schema: Any, instances: Any) -> Iterator[Slot]:
    """The slots of every instance in *instances*, each place (JSON Pointer) once, in first-seen order."""
    done: set[str] = set()
    for instance in instances:
        for slot in slots(schema, instance):
            if slot.pointer not in done:
                done.add(slot.pointer)
                yield slot


def slots(schema: Any, instance: Any) -> list[Slot]:
    """Every place in *instance* a value can go (see the module docstring), outermost first."""
    ts = compile_schema(schema)
    out: list[Slot] = []
    seen: set[str] = set()

    def visit(node: Any, location: str, value: Any, at: str, depth: int) -> None:
        if depth > 16:
            return
        for branch, here in branches(ts, node, location):
            if isinstance(value, dict):
                for name, sub in (branch.get("properties") or {}).items():
                    where, sub_at = f"{at}/{_escape(name)}", f"{here}/properties/{_escape(name)}"
                    if where not in seen:
                        seen.add(where)
                        out.append(Slot(where, name, sub, name in value, sub_at))
                    if name in value:
                        visit(sub, sub_at, value[name], where, depth + 1)
            elif isinstance(value, list) and isinstance(branch.get("items"), dict):
                for index, item in enumerate(value):
                    visit(branch["items"], f"{here}/items", item, f"{at}/{index}", depth + 1)

    visit(ts.schema, "", instance, "", 0)
    return out


def _touches(pointer: str, keep: Iterable[str], below: bool) -> bool:
    """Would a value at *pointer* change a kept place: the place itself, a place above it, or (unless
    *below* is allowed) a place inside it?"""
    for k in keep:
        if pointer == k or k.startswith(pointer + "/"):
            return True
        if not below and pointer.startswith(k + "/"):
            return True
    return False


def apply_values(
    schema: Any, tool: str, arguments: Any, pool: ValuePool, *, pick: int = 0, keep: Iterable[str] = (),
    sources: Iterable[str] | None = None, add: bool = True,
) -> Applied:
    """*arguments* with values from *pool* put in wherever the oracle still accepts the whole.

    :param schema: the tool's input schema (or a compiled :class:`ToolSchema`).
    :param tool: the tool's name (the pool may hold values for one tool only).
    :param arguments: valid arguments (a go case, or the base of a no-go case).
    :param pick: which of several values to offer first (value ``pick % n`` of each slot, then the rest).
    :param keep: JSON Pointers not to touch, nor anything above them, nor (unless *add* is False, when
        only present values are replaced) anything below them.
    :param add: also put values into declared properties the arguments do not have yet.
    :param sources: only values of these sources (default: every source).
    :returns: :class:`Applied`; ``used`` is empty when nothing was put in (then ``arguments`` is unchanged).
    """
    if not len(pool) or not isinstance(arguments, dict):
        return Applied(arguments)
    ts = compile_schema(schema)
    keep = tuple(keep)
    wanted = set(sources) if sources is not None else None
    used: list[tuple[str, Value]] = []
    current = arguments
    # Slots are listed from the arguments as they stand; an outer substitution can remove inner slots.
    for slot in slots(ts, arguments):
        if (keep and _touches(slot.pointer, keep, below=not add)) or (not add and not slot.present):
            continue
        if not get_at(current, slot.pointer.rsplit("/", 1)[0])[0]:
            continue
        offered = [v for v in pool.values_for(tool, slot.pointer, slot.name) if wanted is None or v.source in wanted]
        if not offered:
            continue
        start = pick % len(offered)
        for value in offered[start:] + offered[:start]:
            found, old = get_at(current, slot.pointer)
            if found and old == value.value and type(old) is type(value.value):
                used.append((slot.pointer, value))
                break
            trial = put_at(current, slot.pointer, value.value)
            if ts.is_valid(trial):
                current = trial
                used.append((slot.pointer, value))
                break
    return Applied(current, tuple(used))


def case_source(case: Any) -> str:
    """Where *case*'s values came from: ``schema``, ``sampled``, or a pool source (``known``...)."""
    value = getattr(case, "source", None) or getattr(case, "origin", None) or ""
    return _GENERATED.get(value, value)


def _source_field(case: Any) -> str:
    fields = {f.name for f in dataclasses.fields(case)}
    return "source" if "source" in fields else "origin"


def with_values(
    schema: Any, tool: str, case: Any, pool: ValuePool, *, pick: int = 0, sources: Iterable[str] | None = None
) -> Any:
    """*case* (a :class:`~feeler.generate.Case`) with pool values (of *sources*, default all) put in, its
    source set to the most trusted source used; the location the case exercises (its keyword's place)
    is kept as generated. Returns *case* itself when no value went in."""
    keep: tuple[str, ...] = ()
    add = True
    if getattr(case, "keyword", None):
        place = pointer_of(case.path) if case.path else ""
        keep = (place or "",)
        # A keyword on an object or array (required, minProperties, maxItems...): values inside it may be
        # replaced, but nothing is added, so the shape the case exercises stays as generated.
        add = not isinstance(get_at(case.arguments, keep[0])[1], (dict, list))
    applied = apply_values(schema, tool, case.arguments, pool, pick=pick, keep=keep, add=add, sources=sources)
    if applied.source is None:
        return case
    return dataclasses.replace(case, arguments=applied.arguments, **{_source_field(case): applied.source})
