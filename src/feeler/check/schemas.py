"""Output schemas: the limits feeler holds them to, and validators that judge ``structuredContent`` in bounded time.

An outputSchema comes from the server under test, so it gets what an inputSchema gets:

- the limits of :mod:`feeler._limits` (nesting depth, size, ``enum`` size), checked *before* anything
  recursive (``check_schema`` included) touches the schema;
- patterns read the ECMA-262 way (JSON Schema 2020-12 core 6.4, validation 6.3.3) through
  :func:`feeler.generate._ecma.translate`, the input side's reader, and refused up front by
  :func:`feeler.generate._ecma.check` when their matching can take exponential time (``(a+)+``);
- answers are judged by the input side's validator (:func:`feeler.generate._schema.ecma_validator`), whose
  every pattern match runs in the ``regex`` engine under a time budget (:func:`feeler.generate._ecma.search`);
  here the budget (:data:`MATCH_BUDGET`) is shared by the whole validation, so a pattern that slips past
  the shape check ends in :class:`SlowPattern` (a finding), never in a hang that a stop signal cannot
  interrupt (Python's ``re`` holds the interpreter until it is done).

A schema that breaks a limit or carries an unusable pattern gets no validator (None); the catalog check
``output_schema_valid`` reports why (:func:`output_schema_problem`).
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from functools import lru_cache
from typing import Any

from feeler._limits import schema_limit_problem
from feeler.generate._ecma import MATCH_BUDGET, SlowPattern

__all__ = ["MATCH_BUDGET", "SlowPattern", "output_schema_problem", "output_validator", "validation_errors"]


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
    from feeler.generate._schema import ecma_validator

    return ecma_validator(cls)(schema, format_checker=cls.FORMAT_CHECKER)


def output_validator(schema: Any) -> Any:
    """A validator for *schema*, or None when feeler will not use the schema (invalid, over a limit, or an
    unusable pattern: the catalog check ``output_schema_valid`` reports it). Validate with
    :func:`validation_errors`, which bounds the time pattern matching may take."""
    if not isinstance(schema, (dict, bool)):
        return None
    # Called on every go call: the limits are checked once per schema text, in _compiled. A schema nested
    # past what json can follow breaks MAX_DEPTH anyway (json raises RecursionError, it does not overflow).
    try:
        return _compiled(json.dumps(schema, sort_keys=True))
    except RecursionError:
        return None


def validation_errors(validator: Any, instance: Any, *, budget: float = MATCH_BUDGET) -> list[Any]:
    """Every validation error of *instance*, sorted by place.

    :raises SlowPattern: pattern matching took more than *budget* seconds in all.
    :raises RecursionError: the instance nests deeper than the validator can follow.
    """
    from feeler.generate._ecma import budget as shared

    with shared(budget):
        return sorted(validator.iter_errors(instance), key=lambda e: list(e.absolute_path))
