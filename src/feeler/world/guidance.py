"""Guidance instead of noise: when a tool refuses every go case with one message, say what to give.

A tool that refuses every valid-looking call (``isError``) with the same words ("outside the allowed root", "not
found") is most often waiting for a value from its world, not broken. :func:`gate_hint` turns that
into one hint that quotes the message and names the property to give a value for, and the runner then
drops the per-case go refusals of that tool (the hint replaces them, and ``gate_opens`` stays quiet).
"""

from __future__ import annotations

import re
from typing import Any

from feeler.world.anchor import ToolWorld

__all__ = ["PATH_LIKE", "gate_hint", "property_to_give"]

#: property names that usually carry a value from the server's world (common practice)
PATH_LIKE = re.compile(r"(^|_)(path|root|dir|directory|folder|file|repo|repository|workspace|id|ref|key|name|uri|url)s?$", re.I)


def property_to_give(schema: Any, message: str, arguments: Any = None) -> str | None:
    """The property a value should be given for: one whose value the message echoes (from *arguments*,
    the refused call's, or the property's ``default`` when the call left it out), else a required one the
    message names, else a path- or id-like one, else the first required string property, else the first
    property."""
    if not isinstance(schema, dict):
        return None
    properties = schema.get("properties") if isinstance(schema.get("properties"), dict) else {}
    required = [r for r in schema.get("required") or [] if isinstance(r, str)]
    names = required + [n for n in properties if n not in required]
    sent = arguments if isinstance(arguments, dict) else {}
    for name in names:
        sub = properties.get(name)
        value = sent.get(name, sub.get("default") if isinstance(sub, dict) else None)
        if isinstance(value, str) and len(value) >= 4 and value in message:
            return name
    words = set(re.findall(r"[A-Za-z_][A-Za-z0-9_]*", message.lower()))
    for pool in (required, names):
        for name in pool:
            if name.lower() in words:
                return name
    for name in names:
        if PATH_LIKE.search(name):
            return name
    for name in required:
        sub = properties.get(name)
        if isinstance(sub, dict) and sub.get("type") == "string":
            return name
    return names[0] if names else None


def gate_hint(tool: Any, world: ToolWorld, go_calls: int) -> str | None:
    """The hint for *tool* when every one of its *go_calls* was refused with the same message, else None."""
    if go_calls == 0 or world.entered or world.go_refused != go_calls or len(world.refusals) != 1:
        return None
    shape = next(iter(world.refusals))
    message = world.first_refusal[shape]
    name = property_to_give(tool.input_schema, message, world.first_refused.get(shape))
    quoted = message if len(message) <= 160 else message[:157] + "..."
    what = (
        f"give a value for {name!r} from the server's world: --value {name}=... "
        f"(--value {tool.name}:{name}=... for this tool only; or [tool.feeler.values] in pyproject.toml)"
        if name else "give values from the server's world with --value PROPERTY=... or [tool.feeler.values]"
    )
    return f"every go case was refused with the same message {quoted!r}; {what}"
