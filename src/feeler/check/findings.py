"""Findings: problems with their context, deduplicated by signature, each with a replay file."""

from __future__ import annotations

import hashlib
import json
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

__all__ = ["Finding", "FindingSet"]

#: Checks whose no-go findings are about the broken keyword itself.
_RULE_CHECKS = frozenset({"nogo_stops", "no_crash"})


@dataclass
class Finding:
    """One defect feeler found.

    The keys of ``--format json`` (camelCase, see :meth:`to_json`): ``check``, ``severity`` (error /
    warning), ``tool``, ``kind`` (catalog / go / no-go / probe / alive / tool / chain), ``keyword``,
    ``keywordLocation`` (a JSON Pointer into the tool's input schema, ending in the keyword),
    ``instanceLocation`` (a JSON Pointer into the arguments), ``source`` (where the case's values came
    from), ``boundary`` (a go case on a bound), ``message``, ``errorClass``, ``arguments`` (the smallest
    arguments that show it), ``protocolVersion``, ``replay`` (file), ``count`` (how many calls showed the
    same signature), ``signature``.

    *path* is the instance location as the case wrote it (``$.a[0]``); *keyword_location* a JSON Pointer.
    """

    check: str
    severity: str
    tool: str | None
    kind: str
    message: str
    error_class: str = ""
    keyword: str | None = None
    path: str | None = None
    keyword_location: str | None = None
    source: str | None = None
    boundary: bool = False
    arguments: Any = None
    revision: str | None = None
    request_text: str | None = None
    answer_text: str | None = None
    replay: str | None = None
    count: int = 1
    extra: dict[str, Any] = field(default_factory=dict)
    #: every tool that showed this same finding (the first is ``tool``); see :meth:`FindingSet.add`
    tools: list[str] = field(default_factory=list)

    def __post_init__(self) -> None:
        if self.tool and not self.tools:
            self.tools = [self.tool]

    @property
    def group_key(self) -> str:
        """The signature without the tool, and the message with the tool's name blanked: equal keys on
        several tools are one finding listing those tools."""
        message = self.message.replace(repr(self.tool), "<tool>").replace(str(self.tool), "<tool>") if self.tool else self.message
        return self.signature.split("|", 2)[0] + "|" + self.signature.split("|", 2)[2] + "|" + self.kind + "|" + message

    @property
    def signature(self) -> str:
        """Same check, tool, keyword and path, and error class: the same finding.

        The keyword and path belong to the signature only where they name what is wrong: a no-go case
        the server accepted, or crashed on. Elsewhere they only say which case showed it (a boundary
        exercised, a keyword broken while the envelope was wrong), so one defect is one finding.
        """
        names_rule = self.kind == "no-go" and self.check in _RULE_CHECKS
        keyword, path = (self.keyword, self.instance_location) if names_rule else (None, None)
        return "|".join(str(x) for x in (self.check, self.tool, keyword, path, self.error_class))

    @property
    def short_id(self) -> str:
        return hashlib.sha1(self.signature.encode("utf-8")).hexdigest()[:10]

    @property
    def instance_location(self) -> str | None:
        """Where in the arguments, a JSON Pointer (``""`` for the root); ``None`` without a case."""
        from feeler._json import to_pointer

        try:
            return to_pointer(self.path)
        except ValueError:
            return self.path

    def to_json(self) -> dict[str, Any]:
        out = {
            "check": self.check,
            "severity": self.severity,
            "tool": self.tool,
            "kind": self.kind,
            "keyword": self.keyword,
            "keywordLocation": self.keyword_location,
            "instanceLocation": self.instance_location,
            "source": self.source,
            "boundary": self.boundary,
            "message": self.message,
            "errorClass": self.error_class,
            "arguments": self.arguments,
            "protocolVersion": self.revision,
            "replay": self.replay,
            "count": self.count,
            "signature": self.signature,
            "tools": list(self.tools),
        }
        return out


def _size(value: Any) -> int:
    return len(json.dumps(value, ensure_ascii=False, default=str))


class FindingSet:
    """Findings keyed by signature; keeps the one with the smallest arguments and counts repeats.

    The same finding on several tools (same check, kind, error class and message but for the tool's
    name) is kept once, listing the tools in ``tools``: fourteen tools answering a malformed request the
    same way are one defect of the server, not fourteen.
    """

    def __init__(self) -> None:
        self._by_sig: dict[str, Finding] = {}
        self._by_group: dict[str, str] = {}

    def add(self, finding: Finding) -> bool:
        """Add; True when the finding is new (neither its signature nor, on another tool, its group seen)."""
        sig = self._by_group.get(finding.group_key, finding.signature)
        known = self._by_sig.get(sig)
        if known is None:
            self._by_sig[sig] = finding
            self._by_group.setdefault(finding.group_key, sig)
            return True
        known.count += 1
        if finding.tool and finding.tool not in known.tools:
            known.tools.append(finding.tool)
            return False
        if _size(finding.arguments) < _size(known.arguments) and finding.tool == known.tool:
            finding.count, finding.tools = known.count, known.tools
            self._by_sig[sig] = finding
        return False

    def for_tool(self, tool: str | None) -> list[Finding]:
        """The findings that *tool* showed (alone or with other tools)."""
        return [f for f in self if (tool in f.tools if tool else f.tool is None)]

    def __iter__(self):  # type: ignore[no-untyped-def]
        return iter(sorted(self._by_sig.values(), key=lambda f: (f.tool or "", f.check, f.keyword or "", f.path or "")))

    def __len__(self) -> int:
        return len(self._by_sig)

    def errors(self) -> list[Finding]:
        return [f for f in self if f.severity == "error"]

    def drop(self, signatures: Iterable[str]) -> None:
        """Forget the findings with these signatures (replaced by a summary, e.g. one hint)."""
        for signature in list(signatures):
            self._by_sig.pop(signature, None)

    def signatures(self) -> set[str]:
        """Signatures of the findings, plus ``signature@tool`` for every further tool listed in one."""
        return set(self._by_sig) | {f"{f.signature}@{t}" for f in self._by_sig.values() for t in f.tools[1:]}
