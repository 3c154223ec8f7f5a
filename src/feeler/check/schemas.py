"""Output schemas: the limits feeler holds them to, and validators that judge ``structuredContent`` in bounded time.

An outputSchema comes from the server under test, so it gets what an inputSchema gets:

- the limits of :mod:`feeler._limits` (nesting depth, size, ``enum`` size), checked *before* anything
  recursive (``check_schema`` included) touches the schema;
- patterns read the ECMA-262 way (JSON Schema 2020-12 core 6.4, validation 6.3.3) through
  :func:`feeler.generate._ecma.translate`, the input side's reader, and refused up front by
  :func:`feeler.generate._ecma.check` when their matching can take exponential time (``(a+)+``);
- every pattern match while validating runs in the ``regex`` engine with a time budget shared by the whole
  validation (:data:`MATCH_BUDGET`), so a pattern that slips past the shape check ends in
  :class:`SlowPattern` (a finding), never in a hang that a stop signal cannot interrupt (Python's ``re``
  holds the interpreter until it is done).

A schema that breaks a limit or carries an unusable pattern gets no validator (None); the catalog check
``output_schema_valid`` reports why (:func:`output_schema_problem`).
"""

from __future__ import annotations

import json
import threading
import time
from collections.abc import Iterator
from functools import lru_cache
from typing import Any

from feeler._limits import schema_limit_problem

__all__ = ["MATCH_BUDGET", "SlowPattern", "output_schema_problem", "output_validator", "validation_errors"]

#: Seconds all pattern matches of one validation may take together (common practice: real patterns
#: match in microseconds; a second is far beyond any honest one).
MATCH_BUDGET = 2.0


class SlowPattern(Exception):
    """A pattern match ran past the validation's time budget."""

    def __init__(self, pattern: str, budget: float) -> None:
        super().__init__(pattern)
        self.pattern, self.budget = pattern, budget


class _Budget(threading.local):
    """The running validation's deadline (per thread; outside :func:`validation_errors` each match gets
    the whole budget)."""

    deadline = float("inf")
    budget = MATCH_BUDGET


_BUDGET = _Budget()


@lru_cache(maxsize=1024)
def _regex(pattern: str) -> Any:
    import regex

    from feeler.generate import _ecma

    return regex.compile(_ecma.translate(pattern))


def _search(pattern: str, text: str) -> bool:
    left = min(_BUDGET.deadline - time.monotonic(), _BUDGET.budget)
    if left <= 0:
        raise SlowPattern(pattern, _BUDGET.budget)
    try:
        return _regex(pattern).search(text, timeout=left) is not None
    except TimeoutError as exc:
        raise SlowPattern(pattern, _BUDGET.budget) from exc


# -- the keywords that read patterns, the ECMA-262 way and under the budget ----------------------------


def _pattern(validator: Any, regex: str, instance: Any, schema: Any) -> Iterator[Any]:
    from jsonschema.exceptions import ValidationError

    if validator.is_type(instance, "string") and not _search(regex, instance):
        yield ValidationError(f"{instance!r} does not match {regex!r}")


def _pattern_properties(validator: Any, patterns: dict, instance: Any, schema: Any) -> Iterator[Any]:
    if not validator.is_type(instance, "object"):
        return
    for regex, subschema in patterns.items():
        for key, value in instance.items():
            if _search(regex, key):
                yield from validator.descend(value, subschema, path=key, schema_path=regex)


def _additional_properties(validator: Any, spec: Any, instance: Any, schema: Any) -> Iterator[Any]:
    from jsonschema.exceptions import ValidationError

    if not validator.is_type(instance, "object"):
        return
    props = schema.get("properties", {})
    patterns = list(schema.get("patternProperties", {}))
    extras = [k for k in instance if k not in props and not any(_search(p, k) for p in patterns)]
    if validator.is_type(spec, "object"):
        for extra in extras:
            yield from validator.descend(instance[extra], spec, path=extra)
    elif not spec and extras:
        yield ValidationError(f"Additional properties are not allowed ({', '.join(map(repr, sorted(extras)))} unexpected)")


@lru_cache(maxsize=8)
def _bounded(cls: Any) -> Any:
    from jsonschema import validators

    keywords = {"pattern": _pattern, "patternProperties": _pattern_properties, "additionalProperties": _additional_properties}
    return validators.extend(cls, {k: v for k, v in keywords.items() if k in cls.VALIDATORS})


# -- limits and patterns, before anything recursive ------------------------------------------------------


def _patterns(schema: Any) -> Iterator[str]:
    from feeler.check.audit import schema_places

    for _, node in schema_places(schema):
        if isinstance(node.get("pattern"), str):
            yield node["pattern"]
        if isinstance(node.get("patternProperties"), dict):
            yield from (key for key in node["patternProperties"] if isinstance(key, str))


def output_schema_problem(schema: Any) -> tuple[str, str] | None:
    """``(message, error_class)`` when feeler will not validate answers against *schema*: a limit of
    :mod:`feeler._limits` crossed (``over-limit``), or a pattern that is not ECMA-262 (``invalid-pattern``)
    or whose matching can take exponential time (``slow-pattern``). None when it is usable."""
    from feeler.generate import _ecma

    limit = schema_limit_problem(schema)
    if limit is not None:
        return limit, "over-limit"
    for pattern in _patterns(schema):
        try:
            _ecma.check(pattern)
        except _ecma.PatternError as exc:
            return str(exc), exc.reason
        except (RecursionError, OverflowError) as exc:  # a pattern too deep for the parser
            return f"pattern {pattern[:80]!r} cannot be read: {exc}", "invalid-pattern"
    return None


@lru_cache(maxsize=512)
def _compiled(text: str) -> Any:
    import jsonschema
    from jsonschema.validators import validator_for

    schema = json.loads(text)
    if output_schema_problem(schema) is not None:
        return None
    cls = validator_for(schema, default=jsonschema.Draft202012Validator)
    try:
        cls.check_schema(schema)
    except (jsonschema.SchemaError, RecursionError):
        return None
    bounded = _bounded(cls)
    return bounded(schema, format_checker=cls.FORMAT_CHECKER)


def output_validator(schema: Any) -> Any:
    """A validator for *schema*, or None when feeler will not use the schema (invalid, over a limit, or an
    unusable pattern: the catalog check ``output_schema_valid`` reports it). Validate with
    :func:`validation_errors`, which bounds the time pattern matching may take."""
    if not isinstance(schema, (dict, bool)):
        return None
    if isinstance(schema, dict) and schema_limit_problem(schema) is not None:
        return None  # before json.dumps, which would recurse into a deep schema
    return _compiled(json.dumps(schema, sort_keys=True))


def validation_errors(validator: Any, instance: Any, *, budget: float = MATCH_BUDGET) -> list[Any]:
    """Every validation error of *instance*, sorted by place.

    :raises SlowPattern: pattern matching took more than *budget* seconds in all.
    :raises RecursionError: the instance nests deeper than the validator can follow.
    """
    previous = _BUDGET.deadline, _BUDGET.budget
    _BUDGET.deadline, _BUDGET.budget = time.monotonic() + budget, budget
    try:
        return sorted(validator.iter_errors(instance), key=lambda e: list(e.absolute_path))
    finally:
        _BUDGET.deadline, _BUDGET.budget = previous
