"""JSON helpers shared by every layer: type aliases, canonical encoding, paths."""

from __future__ import annotations

import json
import math
from collections.abc import Iterable
from typing import Any, Union

__all__ = ["JSON", "JSONObject", "canonical_dumps", "canonical_value", "json_path", "json_type"]

JSON = Union[None, bool, int, float, str, list["JSON"], dict[str, "JSON"]]
JSONObject = dict[str, Any]


def canonical_value(value: Any) -> Any:
    """Return *value* with floats that are whole numbers written as integers (``1.0`` -> ``1``).

    JSON Schema counts 1.0 and 1 as the same number, so the canonical form keeps one spelling and a
    git diff of a baseline never shows a change that is only a spelling.
    """
    if isinstance(value, float) and math.isfinite(value) and value.is_integer() and abs(value) < 2**53:
        return int(value)
    if isinstance(value, dict):
        return {k: canonical_value(v) for k, v in value.items()}
    if isinstance(value, list):
        return [canonical_value(v) for v in value]
    return value


def canonical_dumps(value: Any) -> str:
    """The canonical JSON text of *value*: sorted keys, two-space indent, ``1.0`` as ``1``, trailing newline.

    This is the form baselines are stored in, so that diffs show only real changes.
    """
    return json.dumps(canonical_value(value), sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def json_type(value: Any) -> str:
    """The JSON Schema type name of a Python value (``integer`` for whole numbers, as JSON Schema counts)."""
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "boolean"
    if isinstance(value, int):
        return "integer"
    if isinstance(value, float):
        return "integer" if value.is_integer() else "number"
    if isinstance(value, str):
        return "string"
    if isinstance(value, list):
        return "array"
    if isinstance(value, dict):
        return "object"
    raise TypeError(f"{value!r} of type {type(value).__name__} is not a JSON value")


def json_path(parts: Iterable[str | int]) -> str:
    """Render a path as ``$.a[0].b`` (``$`` alone for the root); odd keys are quoted: ``$['a b']``."""
    out = "$"
    for part in parts:
        if isinstance(part, int):
            out += f"[{part}]"
        elif part.isidentifier():
            out += f".{part}"
        else:
            out += "[" + json.dumps(part) + "]"
    return out
