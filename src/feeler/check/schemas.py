"""Compiled validators for output schemas, honouring ``$schema`` (default: JSON Schema 2020-12)."""

from __future__ import annotations

import json
from functools import lru_cache
from typing import Any

__all__ = ["output_validator"]


@lru_cache(maxsize=512)
def _compiled(text: str) -> Any:
    import jsonschema
    from jsonschema.validators import validator_for

    schema = json.loads(text)
    cls = validator_for(schema, default=jsonschema.Draft202012Validator)
    try:
        cls.check_schema(schema)
    except jsonschema.SchemaError:
        return None
    return cls(schema, format_checker=cls.FORMAT_CHECKER)


def output_validator(schema: Any) -> Any:
    """A validator for *schema*, or None when the schema itself is invalid (reported by the catalog checks)."""
    if not isinstance(schema, (dict, bool)):
        return None
    return _compiled(json.dumps(schema, sort_keys=True))
