"""What a server advertises, captured once and kept in a canonical JSON form.

A :class:`Catalog` holds the negotiated revision, server info, capabilities and every tool, prompt,
resource and resource template, each as the raw JSON object the server sent (nothing is dropped, so
baselines and diffs see every field). :meth:`Catalog.dumps` is the canonical text that baselines store:
sorted keys, stable order (tools and prompts by name, resources by URI, templates by URI template),
two-space indent, trailing newline.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from feeler._json import canonical_dumps
from feeler.errors import UsageError

__all__ = ["CATALOG_FORMAT", "Catalog", "Tool"]

#: Stamped into every catalog file; bumped when the layout changes incompatibly.
CATALOG_FORMAT = "feeler-catalog/2"
#: Older catalog formats still read (``revision``/``supportedRevisions`` keys, era ``modern``).
_OLD_CATALOG_FORMATS = ("feeler-catalog/1",)


def _from_old_catalog(data: dict[str, Any]) -> dict[str, Any]:
    """A ``feeler-catalog/1`` document with today's key names (``protocolVersion``, ``supportedVersions``)."""
    out = {k: v for k, v in data.items() if k not in ("revision", "supportedRevisions")}
    out["protocolVersion"] = data.get("revision")
    out["supportedVersions"] = data.get("supportedRevisions") or []
    if out.get("era") == "modern":
        out["era"] = "stateless"
    return out


@dataclass(frozen=True)
class Tool:
    """One tool as advertised by ``tools/list``; ``raw`` is the JSON object exactly as received."""

    raw: Mapping[str, Any]

    @property
    def name(self) -> str:
        return str(self.raw.get("name", ""))

    @property
    def title(self) -> str | None:
        return self.raw.get("title") or (self.annotations.get("title") if self.annotations else None)

    @property
    def description(self) -> str | None:
        return self.raw.get("description")

    @property
    def input_schema(self) -> Any:
        return self.raw.get("inputSchema")

    @property
    def output_schema(self) -> Any:
        return self.raw.get("outputSchema")

    @property
    def annotations(self) -> Mapping[str, Any]:
        value = self.raw.get("annotations")
        return value if isinstance(value, Mapping) else {}

    @property
    def destructive(self) -> bool:
        """True when the tool may destroy data, by the protocol's defaults for absent hints.

        ``destructiveHint`` defaults to true and only counts when ``readOnlyHint`` is not true
        (MCP 2025-03-26 onward, ToolAnnotations). A tool with no annotations at all is therefore *not*
        reported as destructive here: feeler tests it, and lists it as unannotated (see :attr:`annotated`).
        """
        ann = self.annotations
        if not ann:
            return False
        if ann.get("readOnlyHint") is True:
            return False
        return ann.get("destructiveHint", True) is True

    @property
    def annotated(self) -> bool:
        return bool(self.annotations)

    @property
    def task_support(self) -> str:
        """``execution.taskSupport``: ``forbidden`` (the default), ``optional`` or ``required`` (MCP 2025-11-25
        server/tools; a ``required`` tool answers a call without a task with an error)."""
        execution = self.raw.get("execution")
        value = execution.get("taskSupport") if isinstance(execution, Mapping) else None
        return value if isinstance(value, str) else "forbidden"


def _sorted(items: list[Any], key: str) -> list[Any]:
    return sorted(items, key=lambda item: str(item.get(key, "")) if isinstance(item, Mapping) else "")


@dataclass
class Catalog:
    """Everything a server advertises.

    :param revision: the negotiated protocol revision, e.g. ``"2025-11-25"``.
    :param supported_revisions: what the server said it supports (``server/discover``), or the
        negotiated revision alone in the handshake era.
    :param era: ``"handshake"`` (initialize) or ``"stateless"`` (2026-07-28 and later, no handshake).
    """

    revision: str
    era: str
    server: dict[str, Any] = field(default_factory=dict)
    supported_revisions: list[str] = field(default_factory=list)
    capabilities: dict[str, Any] = field(default_factory=dict)
    instructions: str | None = None
    tools: list[dict[str, Any]] = field(default_factory=list)
    prompts: list[dict[str, Any]] = field(default_factory=list)
    resources: list[dict[str, Any]] = field(default_factory=list)
    resource_templates: list[dict[str, Any]] = field(default_factory=list)

    def __post_init__(self) -> None:
        self.tools = _sorted(list(self.tools), "name")
        self.prompts = _sorted(list(self.prompts), "name")
        self.resources = _sorted(list(self.resources), "uri")
        self.resource_templates = _sorted(list(self.resource_templates), "uriTemplate")

    # -- access -------------------------------------------------------------------------------
    def tool_list(self) -> list[Tool]:
        return [Tool(raw) for raw in self.tools]

    def tool(self, name: str) -> Tool:
        for raw in self.tools:
            if raw.get("name") == name:
                return Tool(raw)
        raise KeyError(name)

    # -- canonical form -----------------------------------------------------------------------
    def to_json(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "format": CATALOG_FORMAT,
            "protocolVersion": self.revision,
            "era": self.era,
            "supportedVersions": list(self.supported_revisions),
            "server": dict(self.server),
            "capabilities": dict(self.capabilities),
            "tools": list(self.tools),
            "prompts": list(self.prompts),
            "resources": list(self.resources),
            "resourceTemplates": list(self.resource_templates),
        }
        if self.instructions is not None:
            out["instructions"] = self.instructions
        return out

    def dumps(self) -> str:
        """The canonical JSON text (sorted keys, stable order, trailing newline)."""
        return canonical_dumps(self.to_json())

    @classmethod
    def from_json(cls, data: Any, *, source: str = "catalog") -> Catalog:
        """Build a catalog from its JSON form; *source* names the file in error messages."""
        if not isinstance(data, dict):
            raise UsageError(f"{source}: expected a JSON object with a catalog, got {type(data).__name__}")
        fmt = data.get("format")
        if fmt in _OLD_CATALOG_FORMATS:
            data = _from_old_catalog(data)
        elif fmt != CATALOG_FORMAT:
            raise UsageError(
                f"{source}: format={fmt!r} is not a catalog this feeler reads (expected {CATALOG_FORMAT!r}); "
                "write it again with `feeler catalog`"
            )
        for key in ("protocolVersion", "era"):
            if not isinstance(data.get(key), str):
                raise UsageError(f"{source}: {key!r} must be a string")
        for key in ("tools", "prompts", "resources", "resourceTemplates"):
            if not isinstance(data.get(key, []), list):
                raise UsageError(f"{source}: {key!r} must be a list")
            for index, entry in enumerate(data.get(key, [])):
                if not isinstance(entry, dict):
                    raise UsageError(f"{source}: {key}[{index}] must be a JSON object, got {type(entry).__name__} "
                                     f"{_short(entry)}; write the file again with `feeler catalog`")
        for index, entry in enumerate(data.get("tools", [])):
            if not isinstance(entry.get("name"), str):
                raise UsageError(f"{source}: tools[{index}] has no string 'name'; write the file again with `feeler catalog`")
        for key in ("server", "capabilities"):
            if not isinstance(data.get(key) or {}, dict):
                raise UsageError(f"{source}: {key!r} must be a JSON object")
        versions = data.get("supportedVersions") or []
        if not isinstance(versions, list) or not all(isinstance(v, str) for v in versions):
            raise UsageError(f"{source}: 'supportedVersions' must be a list of strings")
        return cls(
            revision=data["protocolVersion"],
            era=data["era"],
            server=dict(data.get("server") or {}),
            supported_revisions=list(data.get("supportedVersions") or []),
            capabilities=dict(data.get("capabilities") or {}),
            instructions=data.get("instructions"),
            tools=list(data.get("tools", [])),
            prompts=list(data.get("prompts", [])),
            resources=list(data.get("resources", [])),
            resource_templates=list(data.get("resourceTemplates", [])),
        )

    @classmethod
    def loads(cls, text: str, *, source: str = "catalog") -> Catalog:
        try:
            data = json.loads(text)
        except json.JSONDecodeError as exc:
            raise UsageError(f"{source}:{exc.lineno}:{exc.colno}: not valid JSON ({exc.msg})") from exc
        return cls.from_json(data, source=source)


def _short(value: Any, limit: int = 60) -> str:
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."
