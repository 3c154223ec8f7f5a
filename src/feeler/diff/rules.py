"""Schema diff rules: one small function per JSON Schema keyword family, registered in :data:`SCHEMA_RULES`.

Each rule gets the old and the new subschema at one place (``$ref`` already inlined, booleans turned
into objects) and yields :class:`~feeler.diff.model.SchemaEdit` objects saying how the keyword edit moves
the set of accepted instances: NARROWS (fewer accepted), WIDENS (more accepted), CHANGES (neither) or
NEUTRAL (annotation only). The engine applies the direction — inputs are contravariant (narrowing breaks
old callers), outputs covariant (widening breaks old readers) — and looks for a witness with the rule's
``candidates(kit, accepting, rejecting)``.

Section numbers refer to JSON Schema 2020-12 Validation (draft-bhutton-json-schema-validation-01) and
Core (draft-bhutton-json-schema-01).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator, Mapping
from typing import Any

from feeler.diff.model import Effect, SchemaEdit
from feeler.diff.witness import ANNOTATION_KEYWORDS, Kit, NoInstance, pattern_draws

__all__ = ["SCHEMA_RULES", "RULE_KEYWORDS", "Rule", "schema_rule", "HANDLED_KEYWORDS"]

Schema = Mapping[str, Any]
Rule = Callable[[Schema, Schema], Iterator[SchemaEdit]]

#: name -> rule; filled by :func:`schema_rule`, in evaluation order.
SCHEMA_RULES: dict[str, Rule] = {}
#: Keywords some rule (or the engine's recursion) looks at; the ``unknown-keyword`` rule covers the rest.
HANDLED_KEYWORDS: set[str] = set()
#: name -> the keywords it guards; a witness must fail the new schema on one of these (or a combinator).
RULE_KEYWORDS: dict[str, frozenset[str]] = {}


def schema_rule(name: str, *keywords: str) -> Callable[[Rule], Rule]:
    """Register a rule under *name*, guarding *keywords*; rules must have a docstring (checked here)."""

    def register(func: Rule) -> Rule:
        if not (func.__doc__ or "").strip():
            raise TypeError(f"schema rule {name!r} ({func.__qualname__}) needs a docstring saying what it guards")
        if name in SCHEMA_RULES:
            raise ValueError(f"schema rule {name!r} is registered twice")
        SCHEMA_RULES[name] = func
        HANDLED_KEYWORDS.update(keywords)
        RULE_KEYWORDS[name] = frozenset(keywords)
        return func

    return register


# -- candidate helpers ---------------------------------------------------------------------------
def _safe(gen: Callable[[], Iterator[Any]]) -> Iterator[Any]:
    try:
        yield from gen()
    except (NoInstance, KeyError, RecursionError, ValueError, TypeError):
        return


def _with(kit: Kit, a: Schema, **override: Any) -> Iterator[Any]:
    """Minimal and full instances of *a* with *override* keywords applied (then validated by the engine)."""
    sub = {**a, **override}

    def gen() -> Iterator[Any]:
        yield kit.minimal(sub)
        yield kit.full(sub)

    yield from _safe(gen)


def _numbers_near(*points: Any) -> Iterator[Any]:
    for p in points:
        if isinstance(p, (int, float)) and not isinstance(p, bool) and math.isfinite(p):
            for d in (0, 1, -1, 0.5, -0.5, 0.001, -0.001, 2, -2, 10, -10):
                v = p + d
                yield int(v) if float(v).is_integer() else v


def _types(schema: Schema) -> set[str] | None:
    t = schema.get("type")
    if t is None:
        return None
    out = {t} if isinstance(t, str) else set(t)
    return out


def _covers(types: set[str] | None, t: str) -> bool:
    return types is None or t in types or (t == "integer" and "number" in types)


# -- rules --------------------------------------------------------------------------------------
@schema_rule("type", "type")
def type_(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``type`` (Validation 6.1.1): a type no longer allowed narrows; a type newly allowed widens."""
    to, tn = _types(old), _types(new)
    if to == tn:
        return
    lost = sorted(t for t in (to or {"null", "boolean", "number", "string", "array", "object"}) if not _covers(tn, t))
    gained = sorted(t for t in (tn or {"null", "boolean", "number", "string", "array", "object"}) if not _covers(to, t))
    # integer -> number gains the non-integer numbers; number -> integer loses them.
    if to and tn and "number" in to and "number" not in tn and "integer" in tn:
        lost.append("number (non-integer)")
    if to and tn and "number" in tn and "number" not in to and "integer" in to:
        gained.append("number (non-integer)")

    def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
        ta, tb = _types(a), _types(b)
        for t in sorted(ta or {"null", "boolean", "number", "string", "array", "object"}):
            if not _covers(tb, t):
                yield from _with(kit, a, type=t)
        if "number" in (ta or {"number"}) and "number" not in (tb or {"number"}):
            low = _lower(a)
            start = low[0] if low else 0
            yield from (start + 0.5, start + 1.5, 0.5)

    desc = f"type {sorted(to) if to else 'any'} -> {sorted(tn) if tn else 'any'}"
    if lost and gained:
        yield SchemaEdit(Effect.CHANGES, f"{desc}: {', '.join(lost)} no longer allowed, {', '.join(gained)} now allowed",
                      cands, "type")
    elif lost:
        yield SchemaEdit(Effect.NARROWS, f"{desc}: {', '.join(lost)} no longer allowed", cands, "type")
    elif gained:
        yield SchemaEdit(Effect.WIDENS, f"{desc}: {', '.join(gained)} now allowed", cands, "type")


@schema_rule("enum", "enum")
def enum(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``enum`` (Validation 6.1.2): members removed narrow, members added widen, enum added/removed likewise."""
    eo, en = old.get("enum"), new.get("enum")
    if eo == en:
        return

    def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
        ea, eb = a.get("enum"), b.get("enum")
        if isinstance(ea, list):
            yield from (m for m in ea if not isinstance(eb, list) or m not in eb)
        else:
            yield from _with(kit, a)
            yield from kit.draws(a, 10)

    if isinstance(eo, list) and isinstance(en, list):
        removed = [m for m in eo if m not in en]
        added = [m for m in en if m not in eo]
        if removed and added:
            yield SchemaEdit(Effect.CHANGES, f"enum members removed {removed!r}, added {added!r}", cands, "enum")
        elif removed:
            yield SchemaEdit(Effect.NARROWS, f"enum members removed: {removed!r}", cands, "enum")
        elif added:
            yield SchemaEdit(Effect.WIDENS, f"enum members added: {added!r}", cands, "enum")
    elif isinstance(en, list):
        yield SchemaEdit(Effect.NARROWS, f"enum {en!r} added", cands, "enum")
    else:
        yield SchemaEdit(Effect.WIDENS, f"enum {eo!r} removed", cands, "enum")


@schema_rule("const", "const")
def const(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``const`` (Validation 6.1.3): added narrows, removed widens, changed changes."""
    has_o, has_n = "const" in old, "const" in new
    if has_o == has_n and old.get("const") == new.get("const"):
        return

    def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
        if "const" in a:
            yield a["const"]
        yield from _with(kit, a)
        yield from kit.draws(a, 10)

    if has_o and has_n:
        yield SchemaEdit(Effect.CHANGES, f"const {old['const']!r} -> {new['const']!r}", cands, "const")
    elif has_n:
        yield SchemaEdit(Effect.NARROWS, f"const {new['const']!r} added", cands, "const")
    else:
        yield SchemaEdit(Effect.WIDENS, f"const {old['const']!r} removed", cands, "const")


def _lower(s: Schema) -> tuple[float, bool] | None:
    vals = []
    if isinstance(s.get("minimum"), (int, float)):
        vals.append((s["minimum"], False))
    if isinstance(s.get("exclusiveMinimum"), (int, float)) and not isinstance(s.get("exclusiveMinimum"), bool):
        vals.append((s["exclusiveMinimum"], True))
    return max(vals, key=lambda v: (v[0], v[1])) if vals else None


def _upper(s: Schema) -> tuple[float, bool] | None:
    vals = []
    if isinstance(s.get("maximum"), (int, float)):
        vals.append((s["maximum"], False))
    if isinstance(s.get("exclusiveMaximum"), (int, float)) and not isinstance(s.get("exclusiveMaximum"), bool):
        vals.append((s["exclusiveMaximum"], True))
    return min(vals, key=lambda v: (v[0], not v[1])) if vals else None


def _cmp_bound(o: tuple[float, bool] | None, n: tuple[float, bool] | None, lower: bool) -> Effect | None:
    """How a bound moved: tighter -> NARROWS, looser -> WIDENS (absent = unbounded)."""
    if o == n:
        return None
    if o is None:
        return Effect.NARROWS
    if n is None:
        return Effect.WIDENS
    if o[0] == n[0]:
        return Effect.NARROWS if n[1] else Effect.WIDENS  # inclusive -> exclusive tightens
    tighter = n[0] > o[0] if lower else n[0] < o[0]
    return Effect.NARROWS if tighter else Effect.WIDENS


def _fmt_bound(b: tuple[float, bool] | None, lower: bool) -> str:
    if b is None:
        return "none"
    return f"{'>' if lower else '<'}{'' if b[1] else '='} {b[0]}"


def _bound_cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
    pts = [x[0] for x in (_lower(a), _lower(b), _upper(a), _upper(b)) if x]
    for v in _numbers_near(*pts):
        yield v
    yield from _with(kit, a)


@schema_rule("minimum", "minimum", "exclusiveMinimum")
def minimum(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``minimum`` / ``exclusiveMinimum`` (Validation 6.2.4-6.2.5): a raised lower bound narrows."""
    lo, ln = _lower(old), _lower(new)
    effect = _cmp_bound(lo, ln, lower=True)
    if effect:
        yield SchemaEdit(effect, f"lower bound {_fmt_bound(lo, True)} -> {_fmt_bound(ln, True)}", _bound_cands,
                      "minimum" if "minimum" in new or "minimum" in old else "exclusiveMinimum")


@schema_rule("maximum", "maximum", "exclusiveMaximum")
def maximum(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``maximum`` / ``exclusiveMaximum`` (Validation 6.2.2-6.2.3): a lowered upper bound narrows."""
    uo, un = _upper(old), _upper(new)
    effect = _cmp_bound(uo, un, lower=False)
    if effect:
        yield SchemaEdit(effect, f"upper bound {_fmt_bound(uo, False)} -> {_fmt_bound(un, False)}", _bound_cands,
                      "maximum" if "maximum" in new or "maximum" in old else "exclusiveMaximum")


@schema_rule("multipleOf", "multipleOf")
def multiple_of(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``multipleOf`` (Validation 6.2.1): a stricter step narrows, a finer or removed step widens."""
    mo, mn = old.get("multipleOf"), new.get("multipleOf")
    if mo == mn:
        return

    def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
        step = a.get("multipleOf") or 1
        base = _lower(a)[0] if _lower(a) else 0
        start = math.ceil(base / step) if step else 0
        for k in range(start, start + 12):
            v = k * step
            yield int(v) if float(v).is_integer() else v
        yield from _with(kit, a)

    def divides(x: float, y: float) -> bool:
        q = y / x
        return abs(q - round(q)) < 1e-9

    if mo is None:
        effect = Effect.NARROWS
    elif mn is None:
        effect = Effect.WIDENS
    elif divides(mo, mn):
        effect = Effect.NARROWS
    elif divides(mn, mo):
        effect = Effect.WIDENS
    else:
        effect = Effect.CHANGES
    yield SchemaEdit(effect, f"multipleOf {mo!r} -> {mn!r}", cands, "multipleOf")


def _size_rule(name: str, lo_kw: str, hi_kw: str, maker: Callable[[Kit, Schema, int], Any]) -> None:
    def rule(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
        for kw, lower in ((lo_kw, True), (hi_kw, False)):
            vo, vn = old.get(kw), new.get(kw)
            if vo == vn:
                continue
            effect = _cmp_bound(None if vo is None else (vo, False), None if vn is None else (vn, False), lower)
            if effect is None:
                continue

            def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
                pts = sorted({x for x in (a.get(lo_kw), a.get(hi_kw), b.get(lo_kw), b.get(hi_kw)) if x is not None})
                for p in pts:
                    for n in (p - 1, p, p + 1):
                        if 0 <= n <= 10_000:
                            yield from _safe(lambda n=n: iter([maker(kit, a, n)]))

            yield SchemaEdit(effect, f"{kw} {vo!r} -> {vn!r}", cands, kw)

    rule.__doc__ = f"``{lo_kw}`` / ``{hi_kw}``: a raised minimum or lowered maximum narrows."
    rule.__name__ = name
    schema_rule(name, lo_kw, hi_kw)(rule)


def _string_of(kit: Kit, a: Schema, n: int) -> Any:
    base = kit.minimal({k: v for k, v in a.items() if k not in ("minLength", "maxLength")})
    if isinstance(base, str) and base:
        return (base * (n // len(base) + 1))[:n]
    return "a" * n


def _array_of(kit: Kit, a: Schema, n: int) -> Any:
    items = a.get("items", True)
    vals = list(kit.draws(items, max(n, 2))) if items not in (True, {}) else list(range(n))
    if len(vals) < n:
        one = kit.minimal(items) if items not in (True, {}) else 0
        vals = [one] * n if not a.get("uniqueItems") else vals
    return vals[:n]


def _object_of(kit: Kit, a: Schema, n: int) -> Any:
    out = kit.full(a) if isinstance(kit.full(a), dict) else {}
    out = dict(out)
    keys = sorted(out)
    while len(out) > n and keys:
        k = keys.pop()
        if k not in a.get("required", []):
            del out[k]
    i = 0
    while len(out) < n:
        out[f"extra{i}"] = 0
        i += 1
    return out


_size_rule("length", "minLength", "maxLength", _string_of)  # Validation 6.3.1-6.3.2
_size_rule("items-count", "minItems", "maxItems", _array_of)  # Validation 6.4.1-6.4.2
_size_rule("properties-count", "minProperties", "maxProperties", _object_of)  # Validation 6.5.1-6.5.2


@schema_rule("pattern", "pattern")
def pattern(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``pattern`` (Validation 6.3.3): added narrows, removed widens, replaced changes."""
    po, pn = old.get("pattern"), new.get("pattern")
    if po == pn:
        return

    def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
        yield from _with(kit, a)
        yield from ("", "a", "A", "0", "a b", "-", "x" * 40)
        if isinstance(a.get("pattern"), str):  # strings of the accepting side's pattern, read as ECMA-262
            yield from pattern_draws(a["pattern"], 20)
        yield from kit.draws(a, 15)

    effect = Effect.NARROWS if po is None else Effect.WIDENS if pn is None else Effect.CHANGES
    yield SchemaEdit(effect, f"pattern {po!r} -> {pn!r}", cands, "pattern")


@schema_rule("format", "format")
def format_(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``format`` (Validation 7, asserted here: feeler validates with the format checker on)."""
    fo, fn = old.get("format"), new.get("format")
    if fo == fn:
        return

    def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
        yield from _with(kit, a)
        yield from ("", "not a value of this format", "2024-01-02", "a@example.org", "https://example.org/a")

    effect = Effect.NARROWS if fo is None else Effect.WIDENS if fn is None else Effect.CHANGES
    yield SchemaEdit(effect, f"format {fo!r} -> {fn!r}", cands, "format")


@schema_rule("required", "required")
def required(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``required`` (Validation 6.5.3): a newly required property narrows; a dropped one widens."""
    ro, rn = set(old.get("required", [])), set(new.get("required", []))
    for name in sorted(rn - ro):
        yield SchemaEdit(Effect.NARROWS, f"property {name!r} is now required", _without(name), "required")
    for name in sorted(ro - rn):
        yield SchemaEdit(Effect.WIDENS, f"property {name!r} is no longer required", _without(name), "required")


def _without(name: str) -> Callable[[Kit, Schema, Schema], Iterator[Any]]:
    def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
        for value in _with(kit, a):
            if isinstance(value, dict):
                yield {k: v for k, v in value.items() if k != name}

    return cands


@schema_rule("properties", "properties", "additionalProperties")
def properties(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``properties`` (Core 10.3.2.1): declared properties added or removed (common ones are recursed into).

    A property *added* is reported as a compatible addition in both directions, although for an open
    object it strictly narrows what a value under that name may be: clients that send undeclared
    arguments rely on undocumented behaviour (a documented decision, see diff-docs). A property
    *removed* narrows when the new object is closed (``additionalProperties: false``); on an open
    input object the argument is silently ignored from now on, which a validator cannot judge (review).
    """
    po = old.get("properties") if isinstance(old.get("properties"), Mapping) else {}
    pn = new.get("properties") if isinstance(new.get("properties"), Mapping) else {}
    for name in sorted(set(pn) - set(po)):
        if name not in new.get("required", []):
            yield SchemaEdit(Effect.ADDS, f"optional property {name!r} added", None, "properties")
    for name in sorted(set(po) - set(pn)):
        closed = new.get("additionalProperties", True) is False
        if closed:
            yield SchemaEdit(Effect.NARROWS, f"property {name!r} removed and additionalProperties is false",
                          _with_property(name), "properties")
        else:
            yield SchemaEdit(Effect.WIDENS, f"property {name!r} removed", _with_property(name), "properties",
                          input_review=True)


def _with_property(name: str) -> Callable[[Kit, Schema, Schema], Iterator[Any]]:
    def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
        pa = (a.get("properties") or {}).get(name, a.get("additionalProperties", True))
        pb = (b.get("properties") or {}).get(name, b.get("additionalProperties", True))
        values: list[Any] = []
        for gen in (lambda: iter([kit.minimal(pa)]), lambda: iter([kit.full(pa)])):
            values.extend(_safe(gen))
        if pb not in (True, {}):
            values.extend(v for v in kit.invalid_values(pb) if kit.valid(v, pa if pa is not True else {}))
        for base in _with(kit, a):
            if isinstance(base, dict):
                for v in values:
                    yield {**base, name: v}

    return cands


@schema_rule("additionalProperties", "additionalProperties")
def additional_properties(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``additionalProperties`` (Core 10.3.2.3): closing (true -> false) narrows, opening widens.

    When both sides are schemas the engine recurses into them instead.
    """
    ao, an = old.get("additionalProperties", True), new.get("additionalProperties", True)
    if ao == an or (isinstance(ao, Mapping) and isinstance(an, Mapping)):
        return
    if ao in (True, {}) and an in (True, {}):
        return

    def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
        declared = set(a.get("properties") or {}) | set(b.get("properties") or {})
        key = next(k for k in ("extra", "extra_1", "x_extra") if k not in declared)
        ab = b.get("additionalProperties", True)
        aa = a.get("additionalProperties", True)
        values = [0, "x", None, True, {}, []]
        if isinstance(ab, Mapping):
            values = list(kit.invalid_values(ab)) + values
        for base in _with(kit, a):
            if isinstance(base, dict):
                for v in values:
                    if aa is True or kit.valid(v, aa):
                        yield {**base, key: v}

    if an is False:
        effect, msg = Effect.NARROWS, "additionalProperties closed (now false)"
    elif ao is False:
        effect, msg = Effect.WIDENS, "additionalProperties opened (was false)"
    elif ao in (True, {}):
        effect, msg = Effect.NARROWS, "additionalProperties now constrained by a schema"
    else:
        effect, msg = Effect.WIDENS, "additionalProperties no longer constrained"
    yield SchemaEdit(effect, msg, cands, "additionalProperties")


@schema_rule("items", "items", "prefixItems")
def items(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``items`` / ``prefixItems`` (Core 10.3.1.1-10.3.1.2): items or tuple slots added/removed/closed.

    Schema-to-schema edits are recursed into by the engine; this rule covers presence and tuple length.
    """
    io, in_ = old.get("items", True), new.get("items", True)
    po, pn = old.get("prefixItems") or [], new.get("prefixItems") or []

    def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
        ia = a.get("items", True)
        pa = a.get("prefixItems") or []
        n = max(len(pa), len(b.get("prefixItems") or [])) + 1
        for k in range(1, n + 1):
            arr: list[Any] = []
            for i in range(k):
                sub = pa[i] if i < len(pa) else ia
                if sub is False:
                    break
                try:
                    arr.append(kit.minimal(sub) if sub not in (True, {}) else 0)
                except NoInstance:
                    break
            else:
                yield arr
            for odd in kit.invalid_values(b.get("items", True)) if b.get("items", True) not in (True, {}) else ():
                if ia in (True, {}) or kit.valid(odd, ia):
                    yield [*arr, odd][: max(k, 1)] if not pa else [*arr[: len(pa)], odd]
        yield from kit.draws(a, 15)

    if len(po) != len(pn):
        yield SchemaEdit(Effect.CHANGES, f"prefixItems length {len(po)} -> {len(pn)}", cands, "prefixItems")
    if io != in_ and not (isinstance(io, Mapping) and isinstance(in_, Mapping) and io and in_):
        if in_ is False or (io in (True, {}) and isinstance(in_, Mapping) and in_):
            yield SchemaEdit(Effect.NARROWS, f"items {io!r} -> {in_!r}", cands, "items")
        elif io is False or (in_ in (True, {})):
            yield SchemaEdit(Effect.WIDENS, f"items {io!r} -> {in_!r}", cands, "items")


@schema_rule("uniqueItems", "uniqueItems")
def unique_items(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``uniqueItems`` (Validation 6.4.3): false -> true narrows (duplicates now rejected)."""
    uo, un = bool(old.get("uniqueItems", False)), bool(new.get("uniqueItems", False))
    if uo == un:
        return

    def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
        def gen() -> Iterator[Any]:
            items = a.get("items", True)
            one = kit.minimal(items) if items not in (True, {}) else 0
            n = max(2, int(a.get("minItems", 0)))
            yield [one] * n

        yield from _safe(gen)

    yield SchemaEdit(Effect.NARROWS if un else Effect.WIDENS, f"uniqueItems {uo} -> {un}", cands, "uniqueItems")


@schema_rule("dependentRequired", "dependentRequired")
def dependent_required(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """``dependentRequired`` (Validation 6.5.4): a new dependency narrows, a dropped one widens."""
    do, dn = old.get("dependentRequired") or {}, new.get("dependentRequired") or {}
    if do == dn:
        return
    for name in sorted(set(do) | set(dn)):
        so, sn = set(do.get(name, [])), set(dn.get(name, []))
        if so == sn:
            continue

        def cands(kit: Kit, a: Schema, b: Schema, name: str = name) -> Iterator[Any]:
            pa = (a.get("properties") or {}).get(name, {})
            deps = set((b.get("dependentRequired") or {}).get(name, []))
            for base in _with(kit, a):
                if isinstance(base, dict):
                    for v in _safe(lambda: iter([kit.minimal(pa)])):
                        yield {k: x for k, x in {**base, name: v}.items() if k not in deps or k == name}

        effect = Effect.NARROWS if sn > so else Effect.WIDENS if sn < so else Effect.CHANGES
        yield SchemaEdit(effect, f"dependentRequired[{name!r}] {sorted(so)} -> {sorted(sn)}", cands,
                      "dependentRequired")


def _combinator_rule(kw: str) -> None:
    def rule(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
        bo, bn = old.get(kw), new.get(kw)
        if bo == bn:
            return
        lo = bo if isinstance(bo, list) else None
        ln = bn if isinstance(bn, list) else None
        if lo is not None and ln is not None and len(lo) == len(ln):
            return  # same arity: the engine pairs the branches and recurses

        def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
            ba = a.get(kw) or []
            bb = b.get(kw) or []
            for branch in ba:
                if branch not in bb:
                    for gen in (lambda: iter([kit.minimal({**_strip(a, kw), "allOf": [branch]})]),
                                lambda: iter(kit.draws(branch, 10))):
                        yield from _safe(gen)
            yield from _with(kit, a)
            yield from kit.draws(a, 15)

        if kw == "allOf":
            more = Effect.NARROWS
            less = Effect.WIDENS
        else:
            more = Effect.WIDENS if kw == "anyOf" else Effect.CHANGES  # a new oneOf branch may overlap
            less = Effect.NARROWS
        if lo is None:
            yield SchemaEdit(Effect.NARROWS, f"{kw} added ({len(ln or [])} branches)", cands, kw)
        elif ln is None:
            yield SchemaEdit(Effect.WIDENS, f"{kw} removed", cands, kw)
        else:
            removed = [b for b in lo if b not in ln]
            added = [b for b in ln if b not in lo]
            if removed and added:
                effect = Effect.CHANGES
            elif removed:
                effect = less
            else:
                effect = more
            yield SchemaEdit(effect, f"{kw}: {len(removed)} branch(es) removed, {len(added)} added", cands, kw)

    rule.__doc__ = f"``{kw}`` (Core 10.2.1): branches added or removed; same arity is recursed pairwise."
    rule.__name__ = kw
    schema_rule(kw, kw)(rule)


def _strip(schema: Schema, kw: str) -> dict[str, Any]:
    return {k: v for k, v in schema.items() if k != kw}


_combinator_rule("anyOf")
_combinator_rule("oneOf")
_combinator_rule("allOf")


def _opaque_rule(name: str, keywords: tuple[str, ...], added: Effect, removed: Effect, doc: str) -> None:
    def rule(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
        for kw in keywords:
            if old.get(kw) == new.get(kw):
                continue
            effect = added if kw not in old else removed if kw not in new else Effect.CHANGES

            def cands(kit: Kit, a: Schema, b: Schema) -> Iterator[Any]:
                yield from _with(kit, a)
                yield from kit.draws(a, 20)

            yield SchemaEdit(effect, f"{kw} {'added' if kw not in old else 'removed' if kw not in new else 'changed'}",
                          cands, kw)

    rule.__doc__ = doc
    rule.__name__ = name
    schema_rule(name, *keywords)(rule)


_opaque_rule("not", ("not",), Effect.NARROWS, Effect.WIDENS, "``not`` (Core 10.2.1.4): added narrows, removed widens.")
_opaque_rule("conditional", ("if", "then", "else"), Effect.NARROWS, Effect.WIDENS,
             "``if``/``then``/``else`` (Core 10.2.2): any edit may move both ways; witnesses decide.")
_opaque_rule("patternProperties", ("patternProperties", "propertyNames", "dependentSchemas"), Effect.NARROWS,
             Effect.WIDENS, "``patternProperties``, ``propertyNames``, ``dependentSchemas`` (Core 10.3.2).")
_opaque_rule("contains", ("contains", "minContains", "maxContains"), Effect.NARROWS, Effect.WIDENS,
             "``contains`` / ``minContains`` / ``maxContains`` (Core 10.3.1.3, Validation 6.4.4-6.4.5).")
_opaque_rule("unevaluated", ("unevaluatedProperties", "unevaluatedItems"), Effect.NARROWS, Effect.WIDENS,
             "``unevaluatedProperties`` / ``unevaluatedItems`` (Core 11).")


@schema_rule("annotation", *sorted(ANNOTATION_KEYWORDS - {"$defs", "definitions"}))
def annotation(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """Annotations (Validation 9: title, description, default, examples, deprecated, readOnly, writeOnly).

    They validate nothing, but a model reads descriptions and a server applies defaults: a human reviews.
    """
    for kw in ("title", "description", "default", "examples", "deprecated", "readOnly", "writeOnly", "$schema"):
        if old.get(kw) != new.get(kw):
            yield SchemaEdit(Effect.NEUTRAL, f"{kw} changed: {_short(old.get(kw))} -> {_short(new.get(kw))}",
                          None, kw, review=True)


@schema_rule("unknown-keyword")
def unknown_keyword(old: Schema, new: Schema) -> Iterator[SchemaEdit]:
    """Any keyword no other rule guards (vendor keywords, older drafts): changed -> review, never dropped."""
    for kw in sorted((set(old) | set(new)) - HANDLED_KEYWORDS - ENGINE_KEYWORDS):
        if old.get(kw) != new.get(kw):
            yield SchemaEdit(Effect.NEUTRAL, f"keyword {kw!r} changed and feeler has no rule for it", None, kw,
                          review=True)


#: Keywords the engine itself handles (references and definitions are followed, not compared).
ENGINE_KEYWORDS = frozenset({"$ref", "$defs", "definitions", "$id", "$anchor", "$comment", "$dynamicRef",
                             "$dynamicAnchor", "$vocabulary"})


def _short(value: Any, limit: int = 60) -> str:
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."
