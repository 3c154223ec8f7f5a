"""The reference validator for generation tests: ``jsonschema`` with patterns judged by ``regress``.

JSON Schema 2020-12 (core 6.4, validation 6.3.3) names the ECMA-262 regular expression dialect.
``jsonschema`` matches ``pattern`` and ``patternProperties`` with Python's ``re``, which reads ``$``,
``\\d``, ``\\w`` and ``.`` differently. So the reference here is ``jsonschema`` (dialect from ``$schema``,
default 2020-12, formats checked, an empty registry so nothing is fetched) whose three pattern-reading
keywords use ``regress``, an ECMA-262 engine (PyPI ``regress``, the ``u`` flag), not feeler's own
translation in ``feeler.generate._ecma``.
"""

from __future__ import annotations

import functools
from typing import Any

import jsonschema
import referencing
import regress
from jsonschema.exceptions import ValidationError


@functools.lru_cache(maxsize=512)
def _regex(pattern: str) -> regress.Regex:
    return regress.Regex(pattern, "u")


def ecma_search(pattern: str, text: str) -> bool:
    """ECMA-262 (regress): does *pattern* match somewhere in *text*?"""
    return _regex(pattern).find(text) is not None


def _pattern(validator: Any, regex: str, instance: Any, schema: Any) -> Any:
    if validator.is_type(instance, "string") and not ecma_search(regex, instance):
        yield ValidationError(f"{instance!r} does not match {regex!r}")


def _pattern_properties(validator: Any, patterns: dict, instance: Any, schema: Any) -> Any:
    if validator.is_type(instance, "object"):
        for regex, sub in patterns.items():
            for key, value in instance.items():
                if ecma_search(regex, key):
                    yield from validator.descend(value, sub, path=key, schema_path=regex)


def _additional_properties(validator: Any, spec: Any, instance: Any, schema: Any) -> Any:
    if not validator.is_type(instance, "object"):
        return
    props, patterns = schema.get("properties", {}), list(schema.get("patternProperties", {}))
    extras = [k for k in instance if k not in props and not any(ecma_search(p, k) for p in patterns)]
    if validator.is_type(spec, "object"):
        for extra in extras:
            yield from validator.descend(instance[extra], spec, path=extra)
    elif not spec and extras:
        yield ValidationError(f"additional properties {extras!r}")


_KEYWORDS = {"pattern": _pattern, "patternProperties": _pattern_properties, "additionalProperties": _additional_properties}
_CLASSES = {cls: jsonschema.validators.extend(cls, _KEYWORDS) for cls in
            (jsonschema.Draft7Validator, jsonschema.Draft201909Validator, jsonschema.Draft202012Validator)}  # fmt: skip


def reference_validator(schema: Any) -> Any:
    """jsonschema (dialect from ``$schema``, default 2020-12; formats on; no network) with ECMA-262 patterns."""
    base = jsonschema.validators.validator_for(schema, default=jsonschema.Draft202012Validator)
    cls = _CLASSES.get(base, base)
    return cls(schema, format_checker=base.FORMAT_CHECKER, registry=referencing.Registry())


def error_tree(errors: Any) -> Any:
    """Every error and, depth first, the errors in its ``context`` (jsonschema puts the branch errors of
    ``anyOf``/``oneOf`` there, and only when no branch accepts the value: ``ValidationError.context``)."""
    for error in errors:
        yield error
        yield from error_tree(error.context or [])


def _pointer_parts(pointer: str) -> list[str]:
    return [p.replace("~1", "/").replace("~0", "~") for p in pointer.split("/")[1:]]


def _json_path(parts: Any) -> str:
    out = "$"
    for part in parts:
        out += f"[{part}]" if isinstance(part, int) else f".{part}"
    return out


def nogo_is_proven(oracle: Any, schema: Any, case: Any) -> bool:
    """Does *oracle* (jsonschema) reject *case* with its keyword at its instance path?

    The keyword's error is looked for in the whole error tree. Inside ``unevaluatedProperties`` /
    ``unevaluatedItems`` jsonschema reports only that keyword on the container (its error message names
    the unevaluated keys, not why), so there the keyword is proven on the subschema itself: the container
    error exists and the subschema, applied to the value at that key or index, reports the keyword.
    """
    errors = list(oracle.iter_errors(case.arguments))
    if any(e.validator == case.keyword and _json_path(e.absolute_path) == case.path for e in error_tree(errors)):
        return True
    parts = _pointer_parts(case.schema_path)
    for keyword in ("unevaluatedProperties", "unevaluatedItems"):
        if keyword not in parts[:-1]:
            continue
        cut = len(parts) - 1 - parts[::-1].index(keyword)
        sub: Any = schema
        for part in parts[: cut + 1]:
            sub = sub[int(part)] if isinstance(sub, list) else sub[part]
        for outer in error_tree(errors):
            if outer.validator != keyword:
                continue
            container = list(outer.absolute_path)
            value: Any = case.arguments
            for part in container:
                value = value[part]
            for key in (value if isinstance(value, dict) else range(len(value)) if isinstance(value, list) else []):
                inner = list(oracle.evolve(schema=sub).iter_errors(value[key]))
                if any(e.validator == case.keyword and _json_path([*container, key, *e.absolute_path]) == case.path
                       for e in error_tree(inner)):  # fmt: skip
                    return True
    return False
