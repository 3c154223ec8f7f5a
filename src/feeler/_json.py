"""JSON helpers shared by every layer: type aliases, canonical encoding, paths."""

from __future__ import annotations

import json
import math
from collections.abc import Iterable
from typing import Any, Union

__all__ = [
    "JSON",
    "JSONObject",
    "canonical_dumps",
    "canonical_value",
    "compact_dumps",
    "json_path",
    "json_pointer",
    "json_type",
    "path_parts",
    "to_pointer",
]

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


#: ``json.dumps(value, ensure_ascii=False, separators=(",", ":"))`` (and the same with ``sort_keys=True``)
#: with the encoder made once: given options, json.dumps makes a new encoder on every call, which is half
#: the time of encoding a small message on the hot path (a request, a sampled value's key)
compact_dumps = json.JSONEncoder(ensure_ascii=False, separators=(",", ":")).encode
sorted_compact_dumps = json.JSONEncoder(ensure_ascii=False, separators=(",", ":"), sort_keys=True).encode


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


def json_pointer(parts: Iterable[str | int]) -> str:
    """Render a path as a JSON Pointer (RFC 6901): ``/a/0/b``, ``""`` for the root, ``~0``/``~1`` escaped."""
    return "".join("/" + str(part).replace("~", "~0").replace("/", "~1") for part in parts)


def path_parts(path: str) -> list[str | int]:
    """Read a path written as ``$.a[0].b`` / ``$['a b']`` or as a JSON Pointer ``/a/0/b`` into its parts.

    Users may type either form where an option takes a path; reports always show JSON Pointers.
    In a pointer, every token is a string (RFC 6901 does not say whether ``0`` is an index).
    """
    text = path.strip()
    if text == "" or text == "$":
        return []
    if text.startswith("/"):
        return [tok.replace("~1", "/").replace("~0", "~") for tok in text[1:].split("/")]
    if not text.startswith("$"):
        raise ValueError(f"path={path!r} is neither a JSON Pointer (/a/0) nor a $-path ($.a[0])")
    parts: list[str | int] = []
    i, n = 1, len(text)
    while i < n:
        if text[i] == ".":
            j = i + 1
            while j < n and text[j] not in ".[":
                j += 1
            parts.append(text[i + 1 : j])
            i = j
        elif text[i] == "[":
            if text[i + 1 : i + 2] in ('"', "'"):
                decoder = json.JSONDecoder()
                quote = text[i + 1]
                if quote == '"':
                    value, end = decoder.raw_decode(text, i + 1)
                else:
                    end = text.index("'", i + 2) + 1
                    value = text[i + 2 : end - 1]
                parts.append(value)
                i = end + 1
            else:
                j = text.index("]", i)
                token = text[i + 1 : j]
                parts.append(int(token) if token.lstrip("-").isdigit() else token)
                i = j + 1
        else:
            raise ValueError(f"path={path!r}: unexpected {text[i]!r} at position {i}")
    return parts


def to_pointer(path: str | None) -> str | None:
    """*path* (either form, see :func:`path_parts`) as a JSON Pointer; ``None`` stays ``None``."""
    if path is None:
        return None
    return json_pointer(path_parts(path))
