"""Catalog-level diff: one small rule per part of the catalog, registered in :data:`CATALOG_RULES`.

Keys follow PROTOCOL.md section 10 (MCP catalogs): tools and prompts by ``name``, resources by ``uri``,
templates by ``uriTemplate``. Volatile fields are ignored: server version, ``ttlMs``, ``_meta``, order.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any

from feeler.catalog import Catalog, Tool
from feeler.diff.engine import DEFAULT_SAMPLES, diff_schemas
from feeler.diff.model import Change, Direction, Verdict, overall_bump
from feeler.diff.witness import Kit, NoInstance

__all__ = ["CATALOG_RULES", "DiffReport", "catalog_rule", "diff_catalogs", "poisoned_changes", "ANNOTATION_DEFAULTS"]

CatalogRule = Callable[[Catalog, Catalog, int], Iterator[Change]]
CATALOG_RULES: dict[str, CatalogRule] = {}

#: Protocol defaults for absent tool annotation hints (MCP 2025-03-26 .. 2026-07-28, ToolAnnotations).
ANNOTATION_DEFAULTS: dict[str, bool] = {
    "readOnlyHint": False,
    "destructiveHint": True,
    "idempotentHint": False,
    "openWorldHint": True,
}
#: For each hint, the value that is the *dangerous* one (a move toward it breaks a cautious client).
DANGEROUS_VALUE: dict[str, bool] = {
    "readOnlyHint": False,
    "destructiveHint": True,
    "idempotentHint": False,
    "openWorldHint": True,
}


def catalog_rule(name: str) -> Callable[[CatalogRule], CatalogRule]:
    """Register a catalog rule under *name* (docstring required)."""

    def register(func: CatalogRule) -> CatalogRule:
        if not (func.__doc__ or "").strip():
            raise TypeError(f"catalog rule {name!r} needs a docstring")
        CATALOG_RULES[name] = func
        return func

    return register


def _c(kind: str, verdict: Verdict, message: str, subject: str, **kw: Any) -> Change:
    return Change(rule=kind, direction=kw.pop("direction", Direction.CATALOG), verdict=verdict, message=message,
                  subject=subject, **kw)


def _by(items: list[dict[str, Any]], key: str) -> dict[str, dict[str, Any]]:
    return {str(item.get(key)): item for item in items if isinstance(item, Mapping)}


def _sig(tool: Mapping[str, Any]) -> str:
    return json.dumps([tool.get("inputSchema"), tool.get("outputSchema")], sort_keys=True)


@catalog_rule("tools")
def tools(old: Catalog, new: Catalog, samples: int) -> Iterator[Change]:
    """Tools removed (breaking; with a rename hint when a new tool has the same schemas), added (minor),
    and every change inside a tool common to both."""
    to, tn = _by(old.tools, "name"), _by(new.tools, "name")
    removed, added = sorted(set(to) - set(tn)), sorted(set(tn) - set(to))
    renamed: dict[str, str] = {}
    for name in removed:
        twins = [a for a in added if _sig(tn[a]) == _sig(to[name]) and a not in renamed.values()]
        if twins:
            renamed[name] = twins[0]
    for name in removed:
        hint = f"probably renamed to {renamed[name]!r} (same schemas)" if name in renamed else ""
        yield _c("tool-removed", Verdict.BREAKING, f"tool {name!r} removed", f"tool:{name}", hint=hint)
    for name in added:
        back = [o for o, n in renamed.items() if n == name]
        hint = f"probably renamed from {back[0]!r}" if back else ""
        yield _c("tool-added", Verdict.COMPATIBLE, f"tool {name!r} added", f"tool:{name}", hint=hint)
    for name in sorted(set(to) & set(tn)):
        yield from diff_tool(Tool(to[name]), Tool(tn[name]), samples=samples)


def diff_tool(old: Tool, new: Tool, *, samples: int = DEFAULT_SAMPLES) -> Iterator[Change]:
    """Every change between two versions of one tool (schemas, annotations, texts, execution)."""
    subject = f"tool:{new.name}"
    if old.input_schema != new.input_schema:
        yield from diff_schemas(old.input_schema, new.input_schema, Direction.INPUT, subject=subject,
                                samples=samples)
    yield from _output_schema(old, new, subject, samples)
    yield from _annotations(old, new, subject)
    for key in ("description", "title"):
        if old.raw.get(key) != new.raw.get(key):
            yield _c(f"tool-{key}", Verdict.REVIEW, f"{key} changed (it steers a model's choice of tools; "
                     "read the new text)", subject, reason=f"{_short(old.raw.get(key))} -> "
                     f"{_short(new.raw.get(key))}")
    eo, en = old.task_support, new.task_support
    if eo != en:
        verdict = Verdict.BREAKING if en == "required" else Verdict.COMPATIBLE
        yield _c("task-support", verdict, f"execution.taskSupport {eo!r} -> {en!r}", subject)


def poisoned_changes(old: Catalog, new: Catalog, allowed_hosts: tuple[str, ...] = ()) -> Iterator[Change]:
    """Text aimed at the model (:mod:`feeler.check.poison`) that the new catalog carries and the old did not:
    in a tool common to both, in an added tool, or in the server's instructions. Each is a review that
    blocks the release until a person has read it. *allowed_hosts* are the hosts a link may name."""
    from feeler.check.poison import REASONS, scan, scan_text

    def changes(before: set[tuple[str, str]], now: list[Any], subject: str, added: bool) -> Iterator[Change]:
        for s in now:
            if (s.reason, s.where) not in before:
                what = f"new tool: {s.where}" if added else f"{s.where} now"
                yield _c("poisoned-description", Verdict.REVIEW, f"{what} {REASONS[s.reason]} (read it before "
                         "releasing: a model follows it)", subject, reason=f"{s.reason}: {s.excerpt!r}", blocks=True)

    to, tn = _by(old.tools, "name"), _by(new.tools, "name")
    for name in sorted(tn):
        before = {(s.reason, s.where) for s in scan(to[name], allowed_hosts)} if name in to else set()
        yield from changes(before, scan(tn[name], allowed_hosts), f"tool:{name}", name not in to)
    texts = [(c.instructions if isinstance(c.instructions, str) else "") for c in (old, new)]
    before = {(s.reason, s.where) for s in scan_text(texts[0], "instructions", allowed_hosts)}
    yield from changes(before, list(scan_text(texts[1], "instructions", allowed_hosts)), "server", False)


def _output_schema(old: Tool, new: Tool, subject: str, samples: int) -> Iterator[Change]:
    so, sn = old.output_schema, new.output_schema
    if so == sn:
        return
    if so is None:
        yield _c("output-schema-added", Verdict.COMPATIBLE, "outputSchema added: results now carry a "
                 "checked structuredContent", subject, direction=Direction.OUTPUT)
        return
    if sn is None:
        # Decision: breaking. Clients that read structuredContent relied on the server being bound by the
        # schema (MCP 2025-06-18 server/tools: servers MUST return conforming structured results); without
        # it the server may return anything or no structuredContent at all.
        change = _c("output-schema-removed", Verdict.LIKELY_BREAKING, "outputSchema removed: the server is "
                    "no longer bound to return structuredContent of that shape", subject,
                    direction=Direction.OUTPUT, keyword_location="", instance_location="")
        kit = Kit(so)
        for value in kit.invalid_values(so):
            change.verdict, change.witness, change.has_witness = Verdict.BREAKING, value, True
            change.samples_tried += 1
            break
        else:
            change.reason = "the old schema accepts every value tried"
        yield change
        return
    yield from diff_schemas(so, sn, Direction.OUTPUT, subject=subject, samples=samples)


def _annotations(old: Tool, new: Tool, subject: str) -> Iterator[Change]:
    ao, an = old.annotations, new.annotations
    for hint, default in ANNOTATION_DEFAULTS.items():
        vo, vn = bool(ao.get(hint, default)), bool(an.get(hint, default))
        if vo == vn:
            continue
        danger = vn == DANGEROUS_VALUE[hint]
        # destructive/idempotent hints only mean something when the tool is not read-only (ToolAnnotations).
        if hint in ("destructiveHint", "idempotentHint") and an.get("readOnlyHint") is True:
            danger = False
        verdict = Verdict.BREAKING if danger else Verdict.COMPATIBLE
        note = " (toward danger: clients that skip confirmation for this tool must now ask)" if danger else ""
        absent = [f"{side} absent = default {default}" for side, src in (("old", ao), ("new", an)) if hint not in src]
        yield _c("annotation-hint", verdict, f"annotations.{hint} {vo} -> {vn}{note}", subject,
                 reason="; ".join(absent))
    if ao.get("title") != an.get("title"):
        yield _c("tool-title", Verdict.REVIEW, "annotations.title changed", subject,
                 reason=f"{_short(ao.get('title'))} -> {_short(an.get('title'))}")


@catalog_rule("prompts")
def prompts(old: Catalog, new: Catalog, samples: int) -> Iterator[Change]:
    """Prompts removed (breaking) or added (minor); arguments removed, added as required or made required
    (breaking), added optional or made optional (compatible); description changed (review)."""
    po, pn = _by(old.prompts, "name"), _by(new.prompts, "name")
    for name in sorted(set(po) - set(pn)):
        yield _c("prompt-removed", Verdict.BREAKING, f"prompt {name!r} removed", f"prompt:{name}")
    for name in sorted(set(pn) - set(po)):
        yield _c("prompt-added", Verdict.COMPATIBLE, f"prompt {name!r} added", f"prompt:{name}")
    for name in sorted(set(po) & set(pn)):
        subject = f"prompt:{name}"
        ao = _by(po[name].get("arguments") or [], "name")
        an = _by(pn[name].get("arguments") or [], "name")
        for arg in sorted(set(ao) - set(an)):
            yield _c("prompt-argument-removed", Verdict.BREAKING, f"argument {arg!r} removed (callers that pass "
                     "it are now rejected or ignored)", subject)
        for arg in sorted(set(an) - set(ao)):
            req = bool(an[arg].get("required"))
            yield _c("prompt-argument-added", Verdict.BREAKING if req else Verdict.COMPATIBLE,
                     f"{'required' if req else 'optional'} argument {arg!r} added", subject)
        for arg in sorted(set(ao) & set(an)):
            ro, rn = bool(ao[arg].get("required")), bool(an[arg].get("required"))
            if ro != rn:
                yield _c("prompt-argument-required", Verdict.BREAKING if rn else Verdict.COMPATIBLE,
                         f"argument {arg!r} {'is now required' if rn else 'is no longer required'}", subject)
        for key in ("description", "title"):
            if po[name].get(key) != pn[name].get(key):
                yield _c(f"prompt-{key}", Verdict.REVIEW, f"{key} changed", subject)


def _listed(kind: str, key: str, attr: str) -> CatalogRule:
    def rule(old: Catalog, new: Catalog, samples: int) -> Iterator[Change]:
        ro, rn = _by(getattr(old, attr), key), _by(getattr(new, attr), key)
        for k in sorted(set(ro) - set(rn)):
            yield _c(f"{kind}-removed", Verdict.BREAKING, f"{kind.replace('-', ' ')} {k!r} removed", f"{kind}:{k}")
        for k in sorted(set(rn) - set(ro)):
            yield _c(f"{kind}-added", Verdict.COMPATIBLE, f"{kind.replace('-', ' ')} {k!r} added", f"{kind}:{k}")
        for k in sorted(set(ro) & set(rn)):
            if ro[k].get("mimeType") != rn[k].get("mimeType"):
                yield _c(f"{kind}-mime-type", Verdict.BREAKING, f"mimeType {ro[k].get('mimeType')!r} -> "
                         f"{rn[k].get('mimeType')!r} (readers expecting the old type break)", f"{kind}:{k}")
            for field_ in ("description", "title", "name"):
                if ro[k].get(field_) != rn[k].get(field_):
                    yield _c(f"{kind}-{field_}", Verdict.REVIEW, f"{field_} changed", f"{kind}:{k}")

    rule.__doc__ = f"{kind} keyed by {key}: removed (breaking), added (minor), mimeType changed (breaking)."
    return rule


catalog_rule("resources")(_listed("resource", "uri", "resources"))
catalog_rule("resource-templates")(_listed("resource-template", "uriTemplate", "resource_templates"))


def _flatten(caps: Any, prefix: str = "") -> dict[str, Any]:
    out: dict[str, Any] = {}
    if isinstance(caps, Mapping):
        for k, v in caps.items():
            path = f"{prefix}.{k}" if prefix else str(k)
            out[path] = v if not isinstance(v, Mapping) else True
            if isinstance(v, Mapping):
                out.update(_flatten(v, path))
    return out


@catalog_rule("capabilities")
def capabilities(old: Catalog, new: Catalog, samples: int) -> Iterator[Change]:
    """Server capabilities: a capability or sub-flag removed or turned off (breaking), added (minor)."""
    fo, fn = _flatten(old.capabilities), _flatten(new.capabilities)
    for path in sorted(fo):
        if path not in fn and fo[path] not in (False, None):
            if any(path.startswith(p + ".") for p in fo if p not in fn and p != path):
                continue  # the parent's removal already says it
            yield _c("capability-removed", Verdict.BREAKING, f"capability {path!r} removed", "capabilities")
        elif path in fn and fo[path] is True and fn[path] is False:
            yield _c("capability-removed", Verdict.BREAKING, f"capability {path!r} turned off", "capabilities")
    for path in sorted(fn):
        if (path not in fo or fo[path] is False) and fn[path] not in (False, None):
            parent = path.rsplit(".", 1)[0] if "." in path else None
            if parent and parent not in fo:
                continue
            yield _c("capability-added", Verdict.COMPATIBLE, f"capability {path!r} added", "capabilities")


@catalog_rule("revisions")
def revisions(old: Catalog, new: Catalog, samples: int) -> Iterator[Change]:
    """Protocol revisions dropped from supportedRevisions (breaking: clients pinned to them fail), added
    (minor); the negotiated revision changing is reported for review."""
    so, sn = set(old.supported_revisions), set(new.supported_revisions)
    for rev in sorted(so - sn):
        yield _c("revision-dropped", Verdict.BREAKING, f"protocol revision {rev} no longer supported", "revisions")
    for rev in sorted(sn - so):
        yield _c("revision-added", Verdict.COMPATIBLE, f"protocol revision {rev} now supported", "revisions")
    if old.revision != new.revision and not (so - sn):
        yield _c("revision-negotiated", Verdict.REVIEW, f"negotiated revision {old.revision} -> {new.revision}",
                 "revisions")


@catalog_rule("server")
def server(old: Catalog, new: Catalog, samples: int) -> Iterator[Change]:
    """Server name and instructions changed (review); the server *version* is volatile and ignored."""
    if old.server.get("name") != new.server.get("name"):
        yield _c("server-name", Verdict.REVIEW, f"server name {old.server.get('name')!r} -> "
                 f"{new.server.get('name')!r}", "server")
    if old.instructions != new.instructions:
        yield _c("server-instructions", Verdict.REVIEW, "instructions changed (they steer a model)", "server")


def _short(value: Any, limit: int = 80) -> str:
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."


@dataclass
class DiffReport:
    """Every change between two catalogs, plus the overall Semantic Versioning bump.

    :param old_label: where the old side came from (a file, a baseline folder, a target).
    :param new_label: where the new side came from.
    """

    changes: list[Change] = field(default_factory=list)
    old_label: str = "old"
    new_label: str = "new"

    @property
    def breaking(self) -> list[Change]:
        return [c for c in self.changes if c.is_breaking]

    @property
    def bump(self) -> str:
        return overall_bump(self.changes)

    @property
    def exit_code(self) -> int:
        """1 when any change is breaking, likely-breaking or a blocking review, else 0 (see diff-docs)."""
        return 1 if any(c.fails for c in self.changes) else 0

    def to_json(self) -> dict[str, Any]:
        counts: dict[str, int] = {}
        for c in self.changes:
            counts[c.verdict.value] = counts.get(c.verdict.value, 0) + 1
        return {"old": self.old_label, "new": self.new_label, "bump": self.bump, "counts": counts,
                "changes": [c.to_json() for c in self.changes]}


_ORDER = {Verdict.BREAKING: 0, Verdict.LIKELY_BREAKING: 1, Verdict.REVIEW: 2, Verdict.COMPATIBLE: 3}


def diff_catalogs(old: Catalog, new: Catalog, *, samples: int = DEFAULT_SAMPLES, old_label: str = "old",
                  new_label: str = "new", allowed_hosts: tuple[str, ...] = ()) -> DiffReport:
    """Run every catalog rule, then look for poisoned text the new catalog adds (:func:`poisoned_changes`),
    and return a :class:`DiffReport`, most severe changes first (stable order).

    :param samples: instances generated per schema pair when hunting witnesses or confirming compatibility.
    :param allowed_hosts: hosts a description may link to (``allowed_hosts`` of ``[tool.feeler]``).
    """
    changes: list[Change] = []
    for rule in CATALOG_RULES.values():
        try:
            changes.extend(rule(old, new, samples))
        except NoInstance:  # pragma: no cover - a builder failure must not hide the other rules
            continue
    changes.extend(poisoned_changes(old, new, tuple(allowed_hosts)))
    changes.sort(key=lambda c: (_ORDER[c.verdict], c.subject, c.direction.value, c.keyword_location, c.rule, c.message))
    return DiffReport(changes, old_label, new_label)
