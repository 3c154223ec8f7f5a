"""Output baselines: compare recorded tool results with deepdiff, after masking volatile fields.

A record is ``{"tool": name, "arguments": {...}, "result": {...}}``; records are matched by tool and
canonical arguments. Masks hide what changes on every run (timestamps, generated ids):

* path masks — ``$.structuredContent.issuedAt``, ``$.content[*].text``, ``$.items.*.id`` (``*`` matches
  any one key or index);
* pattern masks — regular expressions applied to every string value, matches replaced by ``<masked>``.

In pyproject.toml: ``[tool.feeler] output_masks = ["$.structuredContent.issuedAt"]`` and
``output_mask_patterns = ["\\d{4}-\\d\\d-\\d\\dT[0-9:.]+Z?"]``.
"""

from __future__ import annotations

import copy
import json
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

from feeler._json import json_pointer
from feeler.errors import UsageError

__all__ = ["MASK", "OutputChange", "OutputMasks", "apply_masks", "compare_outputs"]

MASK = "<masked>"
_TOKEN = re.compile(r"\.(\*|[A-Za-z_$][\w$-]*)|\[(\*|\d+|\"(?:[^\"\\]|\\.)*\"|'[^']*')\]")


def _parse_path(path: str) -> list[Any]:
    """``$.a[0].b[*]`` (or the JSON Pointer ``/a/0/b/*``) -> ["a", 0, "b", "*"]; UsageError naming the
    mask when it is not a path."""
    if path.startswith("/"):
        tokens = [t.replace("~1", "/").replace("~0", "~") for t in path[1:].split("/")]
        return [int(t) if t.isdigit() else t for t in tokens]
    if not path.startswith("$"):
        raise UsageError(f"output mask {path!r} must start with '$' (e.g. '$.structuredContent.issuedAt')")
    out: list[Any] = []
    pos = 1
    while pos < len(path):
        m = _TOKEN.match(path, pos)
        if not m:
            raise UsageError(f"output mask {path!r}: cannot read it from character {pos + 1} "
                             f"({path[pos:]!r}); use $.key, [index], [\"odd key\"] and * segments")
        name, bracket = m.group(1), m.group(2)
        if name is not None:
            out.append(name)
        elif bracket == "*":
            out.append("*")
        elif bracket.isdigit():
            out.append(int(bracket))
        elif bracket.startswith('"'):
            out.append(json.loads(bracket))
        else:
            out.append(bracket[1:-1])
        pos = m.end()
    return out


@dataclass(frozen=True)
class OutputMasks:
    """Which parts of recorded outputs to ignore.

    :param paths: JSON paths (``*`` wildcards) whose values are replaced by ``<masked>``.
    :param patterns: regular expressions; every match inside a string value is replaced by ``<masked>``.
    """

    paths: tuple[str, ...] = ()
    patterns: tuple[str, ...] = ()
    _parsed: tuple[tuple[Any, ...], ...] = field(default=(), repr=False, compare=False)
    _regexes: tuple[re.Pattern[str], ...] = field(default=(), repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "_parsed", tuple(tuple(_parse_path(p)) for p in self.paths))
        regexes = []
        for p in self.patterns:
            try:
                regexes.append(re.compile(p))
            except re.error as exc:
                raise UsageError(f"output mask pattern {p!r} is not a regular expression: {exc}") from exc
        object.__setattr__(self, "_regexes", tuple(regexes))

    @classmethod
    def from_config(cls, config: Mapping[str, Any]) -> OutputMasks:
        """Read ``output_masks`` and ``output_mask_patterns`` from a ``[tool.feeler]`` table."""
        paths, patterns = config.get("output_masks", []), config.get("output_mask_patterns", [])
        for key, value in (("output_masks", paths), ("output_mask_patterns", patterns)):
            if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
                raise UsageError(f"[tool.feeler] {key}={value!r} must be a list of strings")
        return cls(tuple(paths), tuple(patterns))


def apply_masks(value: Any, masks: OutputMasks) -> Any:
    """A copy of *value* with masked paths and masked string fragments replaced by ``<masked>``."""
    out = copy.deepcopy(value)
    for segments in masks._parsed:
        out = _mask_path(out, list(segments))
    if masks._regexes:
        out = _mask_strings(out, masks._regexes)
    return out


def _mask_path(node: Any, segments: list[Any]) -> Any:
    if not segments:
        return MASK
    head, rest = segments[0], segments[1:]
    if isinstance(node, dict):
        keys = list(node) if head == "*" else [head] if head in node else []
        for k in keys:
            node[k] = _mask_path(node[k], rest)
    elif isinstance(node, list):
        idx = range(len(node)) if head == "*" else [head] if isinstance(head, int) and head < len(node) else []
        for i in idx:
            node[i] = _mask_path(node[i], rest)
    return node


def _mask_strings(node: Any, regexes: Iterable[re.Pattern[str]]) -> Any:
    if isinstance(node, str):
        for rx in regexes:
            node = rx.sub(MASK, node)
        return node
    if isinstance(node, list):
        return [_mask_strings(v, regexes) for v in node]
    if isinstance(node, dict):
        return {k: _mask_strings(v, regexes) for k, v in node.items()}
    return node


@dataclass
class OutputChange:
    """One difference in a recorded output.

    :param tool: the tool name.
    :param arguments: the pinned arguments of the case.
    :param kind: ``changed``, ``added``, ``removed``, ``type-changed``, ``case-added``, ``case-removed``.
    :param path: where in the result, a JSON Pointer (``/structuredContent/total``; ``""`` the root).
    """

    tool: str
    arguments: Any
    kind: str
    path: str = ""
    old: Any = None
    new: Any = None

    def __str__(self) -> str:
        args = json.dumps(self.arguments, sort_keys=True, ensure_ascii=False)
        head = f"{self.tool} {args}"
        if self.kind in ("case-added", "case-removed"):
            return f"{head}: {self.kind.replace('case-', 'case ')}"
        if self.kind == "added":
            return f"{head}: {self.path!r} added: {_j(self.new)}"
        if self.kind == "removed":
            return f"{head}: {self.path!r} removed (was {_j(self.old)})"
        return f"{head}: {self.path!r} {_j(self.old)} -> {_j(self.new)}"


def _j(value: Any) -> str:
    text = json.dumps(value, sort_keys=True, ensure_ascii=False)
    return text if len(text) <= 80 else text[:77] + "..."


def _key(record: Mapping[str, Any]) -> tuple[str, str]:
    return str(record.get("tool")), json.dumps(record.get("arguments"), sort_keys=True)


_DD_KINDS = {
    "values_changed": "changed",
    "type_changes": "type-changed",
    "dictionary_item_added": "added",
    "dictionary_item_removed": "removed",
    "iterable_item_added": "added",
    "iterable_item_removed": "removed",
}


def compare_outputs(old: Iterable[Mapping[str, Any]], new: Iterable[Mapping[str, Any]],
                    masks: OutputMasks | None = None) -> list[OutputChange]:
    """Readable differences between two lists of recorded outputs, volatile fields masked.

    :param old: the approved records (``outputs.json``).
    :param new: the records from this run.
    :param masks: what to ignore; nothing by default.
    """
    from deepdiff import DeepDiff

    masks = masks or OutputMasks()
    o = {_key(r): r for r in old}
    n = {_key(r): r for r in new}
    out: list[OutputChange] = []
    for key in sorted(set(o) | set(n)):
        tool, args = key[0], json.loads(key[1])
        if key not in n:
            out.append(OutputChange(tool, args, "case-removed"))
            continue
        if key not in o:
            out.append(OutputChange(tool, args, "case-added"))
            continue
        a = apply_masks(o[key].get("result"), masks)
        b = apply_masks(n[key].get("result"), masks)
        tree = DeepDiff(a, b, view="tree", verbose_level=2)
        found: list[OutputChange] = []
        for report_type, items in tree.items():
            kind = _DD_KINDS.get(report_type, report_type)
            for item in items:
                path = json_pointer(item.path(output_format="list"))
                t1 = None if type(item.t1).__name__ == "NotPresent" else item.t1
                t2 = None if type(item.t2).__name__ == "NotPresent" else item.t2
                found.append(OutputChange(tool, args, kind, path, t1, t2))
        out.extend(sorted(found, key=lambda c: (c.path, c.kind)))
    return out
