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
