"""The schema diff engine: walks two schemas side by side, runs every rule, proves verdicts with witnesses.

Walk: at each pair of subschemas (local ``$ref`` inlined, booleans as objects) every rule in
:data:`~feeler.diff.rules.SCHEMA_RULES` runs; then the engine recurses into ``properties`` both sides
declare, ``items``, ``prefixItems``, ``additionalProperties`` schemas and same-arity combinators.

Verdicts: for an input schema a finding that NARROWS or CHANGES the accepted set is a breaking candidate
(an old caller's argument may now be rejected); for an output schema one that WIDENS or CHANGES is (the
server may now return what an old reader rejects). A candidate becomes BREAKING only with a witness that
``jsonschema`` (the reference validator) accepts under the accepting root schema and rejects under the
other; otherwise it is LIKELY_BREAKING with the reason. A schema pair with no breaking candidate is
sampled anyway, so a gap in the rules shows up as a ``sampled`` change rather than passing unseen.
"""

from __future__ import annotations

import copy
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any

from feeler._json import json_pointer
from feeler._limits import schema_limit_problem
from feeler.diff.model import Change, Direction, Effect, SchemaEdit, Verdict
from feeler.diff.rules import RULE_KEYWORDS, SCHEMA_RULES
from feeler.diff.witness import Kit, NoInstance, is_valid, validator

__all__ = ["diff_schemas", "DEFAULT_SAMPLES"]

#: How many generated instances a schema pair gets when looking for a witness or confirming compatibility.
DEFAULT_SAMPLES = 25
#: Upper bound on rule-specific candidates tried per finding (each costs two validations).
MAX_CANDIDATES = 80
#: Recursion depth cap (recursive schemas through $ref also stop at a repeated reference pair).
MAX_DEPTH = 40

Step = tuple[Any, Any, Any]  # (instance key or index, old child schema, new child schema)


@dataclass
class _Walk:
    direction: Direction
    root_old: Any
    root_new: Any
    subject: str
    samples: int
    changes: list[Change] = field(default_factory=list)
    kits: dict[str, Kit] = field(default_factory=dict)
    bases: dict[str, list[Any]] = field(default_factory=dict)

    @property
    def accept_side(self) -> str:
        """Which side a witness must satisfy: old for inputs (an old call), new for outputs (a new result)."""
        return "old" if self.direction is Direction.INPUT else "new"

    def root(self, side: str) -> Any:
        return self.root_old if side == "old" else self.root_new

    def kit(self, side: str) -> Kit:
        if side not in self.kits:
            self.kits[side] = Kit(self.root(side))
        return self.kits[side]

    def base_instances(self, side: str) -> list[Any]:
        """Valid root instances to embed local witnesses into.

        First one valid under *both* roots when it can be built (so a witness fails the other schema only
        where the change is, not also for an unrelated new requirement), then minimal, then full.
        """
        if side not in self.bases:
            kit = self.kit(side)
            other = self.root_new if side == "old" else self.root_old
            out: list[Any] = []
            makers = [kit.minimal, kit.full]
            if "$ref" not in repr(other) and isinstance(other, dict):
                makers.insert(0, lambda root: kit.minimal({"allOf": [root, other]}, draw=False))
            for make in makers:
                try:
                    value = make(self.root(side))
                except (NoInstance, KeyError, RecursionError):
                    continue
                if value not in out and is_valid(self.root(side), value):
                    out.append(value)
            self.bases[side] = out
        return self.bases[side]


def _norm(schema: Any) -> Any:
    if schema is True or schema is None:
        return {}
    if schema is False:
        return {"not": {}}
    return schema


def diff_schemas(
    old: Any,
    new: Any,
    direction: Direction,
    *,
    subject: str = "",
    samples: int = DEFAULT_SAMPLES,
) -> list[Change]:
    """Compare two JSON Schemas and return every :class:`Change`, with verdicts and witnesses.

    :param old: the approved schema (a tool's ``inputSchema`` or ``outputSchema``).
    :param new: the schema now advertised.
    :param direction: :attr:`Direction.INPUT` (narrowing breaks) or :attr:`Direction.OUTPUT` (widening breaks).
    :param subject: what the schema belongs to, e.g. ``"tool:create_ticket"``, copied into each change.
    :param samples: generated instances per search (witness hunt, compatibility sampling).
    """
    if old == new:
        return []
    if limit := schema_limit_problem(old) or schema_limit_problem(new):  # feeler._limits: refuse before recursing
        return [Change(rule="schema-limit", direction=direction, verdict=Verdict.LIKELY_BREAKING, message=limit, subject=subject)]
    walk = _Walk(direction, old, new, subject, samples)
    _visit(walk, _norm(old), _norm(new), [], [], frozenset(), 0)
    _sample_compatible(walk)
    return walk.changes


def _visit(walk: _Walk, o: Any, n: Any, spath: list[Any], trail: list[Step], seen: frozenset, depth: int) -> None:
    if depth > MAX_DEPTH:
        return
    refs = (o.get("$ref") if isinstance(o, dict) else None, n.get("$ref") if isinstance(n, dict) else None)
    if any(refs):
        if refs in seen:
            return  # a recursive schema: this pair of references is already being compared further up
        seen = seen | {refs}
    try:
        o = _norm(walk.kit("old").deref(o))
        n = _norm(walk.kit("new").deref(n))
    except (KeyError, IndexError, ValueError):
        if o != n:
            walk.changes.append(Change(
                rule="ref", direction=walk.direction, verdict=Verdict.REVIEW, subject=walk.subject,
                message=f"$ref {refs[0]!r} -> {refs[1]!r} cannot be resolved locally; compare them by hand",
                keyword_location=json_pointer(spath), instance_location=json_pointer([s[0] for s in trail])))
        return
    if o == n or not isinstance(o, dict) or not isinstance(n, dict):
        return
    for name, rule in SCHEMA_RULES.items():
        for finding in rule(o, n):
            walk.changes.append(_judge(walk, name, finding, o, n, spath, trail))
    for child_o, child_n, s_extra, step in _children(o, n):
        _visit(walk, child_o, child_n, spath + s_extra, trail + ([(step, child_o, child_n)] if step is not None else []),
               seen, depth + 1)


def _children(o: dict[str, Any], n: dict[str, Any]) -> Iterator[tuple[Any, Any, list[Any], Any]]:
    """Pairs of subschemas to recurse into, with the schema path suffix and the instance step (or None)."""
    po, pn = o.get("properties") or {}, n.get("properties") or {}
    if isinstance(po, dict) and isinstance(pn, dict):
        for name in sorted(set(po) & set(pn)):
            yield po[name], pn[name], ["properties", name], name
    ao, an = o.get("additionalProperties"), n.get("additionalProperties")
    if isinstance(ao, dict) and isinstance(an, dict) and ao and an:
        declared = set(po) | set(pn)
        key = next(k for k in ("extra", "extra_1", "extra_2", "x_extra") if k not in declared)
        yield ao, an, ["additionalProperties"], key
    xo, xn = o.get("prefixItems") or [], n.get("prefixItems") or []
    for i in range(min(len(xo), len(xn))):
        yield xo[i], xn[i], ["prefixItems", i], i
    io, in_ = o.get("items"), n.get("items")
    if isinstance(io, dict) and isinstance(in_, dict) and io and in_:
        yield io, in_, ["items"], len(xo)
    for kw in ("anyOf", "oneOf", "allOf"):
        bo, bn = o.get(kw), n.get(kw)
        if isinstance(bo, list) and isinstance(bn, list) and len(bo) == len(bn):
            for i in range(len(bo)):
                yield bo[i], bn[i], [kw, i], None
    no, nn = o.get("not"), n.get("not")
    _ = (no, nn)  # `not` edits are judged whole by the `not` rule: recursing would invert every verdict


def _judge(walk: _Walk, rule: str, f: SchemaEdit, o: Any, n: Any, spath: list[Any], trail: list[Step]) -> Change:
    change = Change(
        rule=rule, direction=walk.direction, verdict=Verdict.COMPATIBLE, message=f.message, subject=walk.subject,
        keyword_location=json_pointer(spath + ([f.keyword] if f.keyword else [])),
        instance_location=json_pointer([s[0] for s in trail]),
    )
    if f.review or f.effect is Effect.NEUTRAL:
        change.verdict = Verdict.REVIEW
        return change
    if f.effect is Effect.ADDS:
        change.addition = True
        return change
    inp = walk.direction is Direction.INPUT
    if inp and f.input_review:
        change.verdict = Verdict.REVIEW
        change.reason = "every old argument still validates, but the server no longer declares this one"
        return change
    breaking = f.effect is Effect.CHANGES or (f.effect is Effect.NARROWS) == inp
    if not breaking:
        change.addition = inp  # an input that accepts more is new functionality (semver minor)
        return change
    witness, tried = _find_witness(walk, rule, f, o, n, trail)
    change.samples_tried = tried
    if witness is not _NOTHING:
        change.verdict, change.witness, change.has_witness = Verdict.BREAKING, witness, True
    else:
        change.verdict = Verdict.LIKELY_BREAKING
        side = "old accepts and the new rejects" if inp else "the new allows and the old forbids"
        change.reason = f"the rule says breaking, but none of {tried} instances tried is one {side}"
    return change


_NOTHING = object()


#: Keywords through which a nested failure surfaces at an outer path (jsonschema reports the outer keyword).
_COMPOSITE = frozenset({"anyOf", "oneOf", "allOf", "not", "if", "then", "else", "$ref", "dependentSchemas",
                        "unevaluatedProperties", "unevaluatedItems", "contains", "propertyNames", "false"})


def _fails_here(root: Any, instance: Any, where: list[Any], keywords: frozenset[str]) -> bool:
    """True when *root* rejects *instance* at (or under) the instance path *where*, on one of *keywords*.

    This ties a witness to its change: with several edits in one schema, an instance that fails only an
    unrelated new requirement does not prove this one.
    """
    try:
        errors = list(validator(root).iter_errors(instance))
    except Exception:  # an unresolvable schema cannot prove anything
        return False
    loose = not keywords
    stack = list(errors)
    while stack:
        err = stack.pop()
        path = list(err.absolute_path)
        if path[: len(where)] == where and (loose or err.validator in keywords):
            return True
        stack.extend(err.context or ())
    return False


#: Rules whose edits surface as errors of *other* keywords below them (a failing branch of allOf reports
#: its own keyword, a removed property's value fails its old subschema): any error at or under the path counts.
_LOOSE_RULES = frozenset({"allOf", "anyOf", "oneOf", "not", "conditional", "patternProperties", "contains",
                          "unevaluated", "properties", "additionalProperties", "items", "sampled"})


def _find_witness(walk: _Walk, rule: str, f: SchemaEdit, o: Any, n: Any, trail: list[Step]) -> tuple[Any, int]:
    side = walk.accept_side
    other = "new" if side == "old" else "old"
    a, b = (o, n) if side == "old" else (n, o)
    kit = walk.kit(side)
    root_a, root_b = walk.root(side), walk.root(other)
    steps = [(s[0], s[1] if side == "old" else s[2]) for s in trail]
    where = [s[0] for s in trail]
    keywords = frozenset() if rule in _LOOSE_RULES else RULE_KEYWORDS.get(rule, frozenset()) | _COMPOSITE
    tried = 0

    def check(local: Any) -> bool:
        nonlocal tried
        for base in walk.base_instances(side) or [None]:
            instance = _embed(kit, base, steps, local)
            if instance is _NOTHING:
                continue
            tried += 1
            if is_valid(root_a, instance) and _fails_here(root_b, instance, where, keywords):
                check.found = instance  # type: ignore[attr-defined]
                return True
        return False

    sources: list[Iterator[Any]] = []
    if f.candidates is not None:
        sources.append(_bounded(f.candidates(kit, a, b), MAX_CANDIDATES))
    sources.append(_local_draws(kit, a, b, walk.samples))
    for source in sources:
        try:
            for local in source:
                if check(local):
                    return check.found, tried  # type: ignore[attr-defined]
        except (NoInstance, KeyError, RecursionError, TypeError, ValueError):
            continue
    # Last resort: whole-root draws from the accepting schema.
    for instance in kit.draws(root_a, walk.samples):
        tried += 1
        if _fails_here(root_b, instance, where, keywords):
            return instance, tried
    return _NOTHING, tried


def _bounded(it: Iterator[Any], limit: int) -> Iterator[Any]:
    for i, value in enumerate(it):
        if i >= limit:
            return
        yield value


def _local_draws(kit: Kit, a: Any, b: Any, n: int) -> Iterator[Any]:
    # No local pre-filter: b's $refs resolve against the other root, so only the root check is exact.
    yield from kit.draws(a, n)


def _embed(kit: Kit, base: Any, steps: list[tuple[Any, Any]], value: Any) -> Any:
    """*base* with *value* put at the instance path *steps*, building missing containers on the way."""
    if not steps:
        return copy.deepcopy(value)
    root = copy.deepcopy(base)
    if root is None:
        try:
            root = kit.minimal(kit.root)
        except (NoInstance, KeyError, RecursionError):
            return _NOTHING
    node = root
    for i, (step, child) in enumerate(steps):
        last = i == len(steps) - 1
        if isinstance(step, str):
            if not isinstance(node, dict):
                return _NOTHING
            if last:
                node[step] = copy.deepcopy(value)
                break
            if step not in node or not isinstance(node[step], (dict, list)):
                try:
                    node[step] = kit.minimal(child)
                except (NoInstance, KeyError, RecursionError):
                    return _NOTHING
        else:
            if not isinstance(node, list):
                return _NOTHING
            while len(node) <= step:
                try:
                    node.append(kit.minimal(child))
                except (NoInstance, KeyError, RecursionError):
                    return _NOTHING
            if last:
                node[step] = copy.deepcopy(value)
                break
        node = node[step]
    return root


def _sample_compatible(walk: _Walk) -> None:
    """For a pair with no breaking candidate: sample, and record how many instances were tried."""
    if any(c.verdict in (Verdict.BREAKING, Verdict.LIKELY_BREAKING) for c in walk.changes):
        return
    side = walk.accept_side
    other = "new" if side == "old" else "old"
    kit = walk.kit(side)
    pool = list(walk.base_instances(side)) + [v for v in kit.draws(walk.root(side), walk.samples)]
    tried = 0
    for instance in pool:
        tried += 1
        if not is_valid(walk.root(other), instance):
            what = "old accepts and the new rejects" if side == "old" else "new allows and the old forbids"
            walk.changes.append(Change(
                rule="sampled", direction=walk.direction, verdict=Verdict.BREAKING, subject=walk.subject,
                message=f"a sampled instance that the {what} (no keyword rule explains it; review the edit)",
                keyword_location="", instance_location="", witness=instance, has_witness=True, samples_tried=tried))
            return
    for change in walk.changes:
        if change.verdict is Verdict.COMPATIBLE:
            change.samples_tried = tried
