"""Witness building: concrete JSON values that one schema accepts and another rejects.

Three tools, cheapest first:

* :class:`Kit` builds a *minimal* valid instance of a schema by construction (required properties only,
  smallest numbers and strings that meet the bounds), a *full* one (every declared property), and a few
  values a schema rejects. Construction beats filtering: it is fast and deterministic.
* :func:`draws` asks hypothesis-jsonschema's ``from_schema`` for a bounded number of examples, derandomized
  so the same schemas always give the same witnesses; used when construction is not enough.
* :func:`validator` is the oracle: ``jsonschema`` with the format checker on, the dialect chosen by
  ``$schema`` (2020-12 when absent, as MCP 2025-11-25 basic/index says), and a registry that never fetches
  a remote ``$ref`` (MCP 2026-07-28 basic/index: clients MUST NOT dereference network refs by default).
"""

from __future__ import annotations

import copy
import functools
import json
import warnings
from collections.abc import Iterator, Mapping
from typing import Any

import jsonschema
import referencing
import referencing.exceptions
from jsonschema.validators import validator_for

from feeler.errors import SchemaProblem

__all__ = ["NoInstance", "Kit", "draws", "is_valid", "pattern_draws", "resolve_pointer", "validator"]

#: JSON Schema keywords that validate nothing (JSON Schema 2020-12 meta-data vocabulary, section 9).
ANNOTATION_KEYWORDS = frozenset(
    {"title", "description", "default", "examples", "deprecated", "readOnly", "writeOnly", "$comment", "$id",
     "$schema", "$anchor", "$defs", "definitions"}
)

#: One known-good sample per format (RFC 3339, RFC 5321, RFC 3986, RFC 4122, RFC 791, RFC 4291, RFC 1123).
FORMAT_SAMPLES: dict[str, str] = {
    "date-time": "2024-01-02T03:04:05Z",
    "date": "2024-01-02",
    "time": "03:04:05Z",
    "duration": "P1D",
    "email": "a@example.org",
    "idn-email": "a@example.org",
    "hostname": "example.org",
    "idn-hostname": "example.org",
    "ipv4": "192.0.2.1",
    "ipv6": "2001:db8::1",
    "uri": "https://example.org/a",
    "uri-reference": "/a",
    "iri": "https://example.org/a",
    "iri-reference": "/a",
    "uri-template": "https://example.org/{a}",
    "uuid": "123e4567-e89b-12d3-a456-426614174000",
    "json-pointer": "/a",
    "relative-json-pointer": "0/a",
    "regex": "a+",
}

#: Values tried, in order, when a value a schema rejects is wanted.
ODD_VALUES: tuple[Any, ...] = (None, True, 0, -1, 0.5, "", "x", [], {}, 10**12, -(10**12), "x" * 300, [None])


class NoInstance(Exception):
    """No instance could be built for a schema (unsatisfiable, or beyond the builder)."""


def _no_remote(uri: str) -> referencing.Resource:
    raise referencing.exceptions.NoSuchResource(ref=uri)


_REGISTRY: referencing.Registry = referencing.Registry(retrieve=_no_remote)  # type: ignore[call-arg]


def _key(schema: Any) -> str:
    return json.dumps(schema, sort_keys=True, default=str)


@functools.lru_cache(maxsize=4096)
def _validator_cached(key: str) -> Any:
    from feeler.generate._schema import ORACLES, ecma_validator

    schema = json.loads(key)
    cls = validator_for(schema, default=jsonschema.Draft202012Validator)
    oracle = ORACLES.get(cls) or ecma_validator(cls)
    return oracle(schema, registry=_REGISTRY, format_checker=cls.FORMAT_CHECKER)


def validator(schema: Any) -> Any:
    """The reference validator for *schema* (cached): format checker on, no remote ``$ref``, patterns read
    the ECMA-262 way under a time budget (the oracle of ``feeler check``: :mod:`feeler.generate._ecma`)."""
    return _validator_cached(_key(schema))


def is_valid(root: Any, instance: Any, sub: Any = None) -> bool:
    """Whether *instance* is valid under *sub* (a subschema of *root*, resolving refs against *root*).

    An unresolvable reference counts as "not valid": feeler never claims a witness it cannot check.
    """
    base = validator(root)
    try:
        if sub is None:
            return bool(base.is_valid(instance))
        return bool(base.evolve(schema=sub).is_valid(instance))
    except (referencing.exceptions.Unresolvable, jsonschema.exceptions.SchemaError, RecursionError, SchemaProblem, ValueError):
        return False  # also a pattern that is not ECMA-262 (ValueError) or runs past its budget (SlowPattern)


def resolve_pointer(root: Any, ref: str) -> Any:
    """Resolve a local ``$ref`` (``#`` or ``#/a/b``) against *root*; raise KeyError for anything else."""
    if ref == "#":
        return root
    if not ref.startswith("#/"):
        raise KeyError(ref)
    node = root
    for raw in ref[2:].split("/"):
        part = raw.replace("~1", "/").replace("~0", "~")
        if isinstance(node, list):
            node = node[int(part)]
        elif isinstance(node, Mapping) and part in node:
            node = node[part]
        else:
            raise KeyError(ref)
    return node


def _types_of(schema: Mapping[str, Any]) -> list[str]:
    t = schema.get("type")
    if isinstance(t, str):
        return [t]
    if isinstance(t, list) and t:
        return [str(x) for x in t]
    if "const" in schema:
        return []
    if any(k in schema for k in ("properties", "required", "additionalProperties", "minProperties",
                                 "patternProperties", "dependentRequired")):
        return ["object"]
    if any(k in schema for k in ("items", "prefixItems", "minItems", "maxItems", "uniqueItems", "contains")):
        return ["array"]
    if any(k in schema for k in ("minLength", "maxLength", "pattern", "format")):
        return ["string"]
    if any(k in schema for k in ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum", "multipleOf")):
        return ["number"]
    return ["null", "boolean", "integer", "string", "object", "array"]


try:  # Python 3.11+: the parser moved; sre_parse still imports but warns
    import re._parser as _sre  # type: ignore[import-not-found]
except ImportError:  # pragma: no cover - Python 3.10
    import sre_parse as _sre  # type: ignore[no-redef]


def _regex_walk(items: Any, stretch: int) -> str:
    """Build a short string from a parsed regex: first branch, first class member, minimal repeats.

    *stretch* extra repetitions go to each repeat (used to meet a ``minLength``).
    """
    out = []
    for op, arg in items:
        name = str(op)
        if name == "LITERAL":
            out.append(chr(arg))
        elif name == "NOT_LITERAL":
            out.append("a" if arg != ord("a") else "b")
        elif name == "ANY":
            out.append("a")
        elif name == "IN":
            out.append(_class_member(arg))
        elif name in ("MAX_REPEAT", "MIN_REPEAT", "POSSESSIVE_REPEAT"):
            lo, hi, sub = arg
            n = lo + stretch if hi is _sre.MAXREPEAT else min(hi, lo + stretch)
            out.append(_regex_walk(sub, stretch) * n)
        elif name == "SUBPATTERN":
            out.append(_regex_walk(arg[-1], stretch))
        elif name == "BRANCH":
            out.append(_regex_walk(arg[1][0], stretch))
        elif name in ("AT", "ASSERT", "ASSERT_NOT"):
            continue
        elif name == "CATEGORY":
            out.append(_category(arg))
        else:
            raise NoInstance(f"regex construct {name} is beyond the builder")
    return "".join(out)


def _category(cat: Any) -> str:
    name = str(cat)
    if "NOT" in name:
        return "-" if "DIGIT" in name else "0" if "WORD" in name else "a"
    return {"CATEGORY_DIGIT": "0", "CATEGORY_WORD": "a", "CATEGORY_SPACE": " "}.get(name, "a")


def _class_member(items: Any) -> str:
    negate = False
    for op, arg in items:
        name = str(op)
        if name == "NEGATE":
            negate = True
            continue
        if negate:
            break
        if name == "LITERAL":
            return chr(arg)
        if name == "RANGE":
            return chr(arg[0])
        if name == "CATEGORY":
            return _category(arg)
    if negate:
        banned = {chr(a) for op, a in items if str(op) == "LITERAL"}
        for c in "a0-_ ":
            if c not in banned:
                return c
    return "a"


@functools.lru_cache(maxsize=1024)
def _regex_example(pattern: str, min_len: int, max_len: int | None) -> str:
    """A short string matching ECMA-262 *pattern* (searched, as JSON Schema 2020-12 Validation 6.3.3 says)
    within the length bounds: built from the parse tree of the pattern's translation, else drawn from
    the pattern's strings (:func:`feeler.generate._strategies.pattern_strings`); every candidate confirmed
    by the budgeted ECMA-262 matcher (:func:`feeler.generate._ecma.search`), never by Python's ``re``."""
    import re

    from feeler.generate import _ecma

    def ok(s: str) -> bool:
        return len(s) >= min_len and (max_len is None or len(s) <= max_len) and _ecma.search(pattern, s)

    try:
        parsed = _sre.parse(_ecma.translate(pattern))
        try:
            for stretch in (0, 1, 2, 4, 8, 16):
                candidate = _regex_walk(list(parsed), stretch)
                if ok(candidate):
                    return candidate
        except NoInstance:
            pass  # a construct beyond the builder (a back-reference, ...): drawn below instead
        from feeler.generate._strategies import pattern_strings

        for value in _draw_strategy(pattern_strings(pattern), 30):
            if isinstance(value, str) and ok(value):
                return value
    except (NoInstance, re.error, TypeError, ValueError, OverflowError, SchemaProblem):
        pass  # not ECMA-262 (PatternError is a ValueError), or too slow to match (SlowPattern)
    raise NoInstance(f"no string matches pattern {pattern!r} within the length bounds")


def _draw_strategy(strategy: Any, n: int) -> list[Any]:
    """Up to *n* derandomized draws from *strategy*, no shrinking (fast, and the same on every run)."""
    from hypothesis import HealthCheck, Phase, given, settings

    out: list[Any] = []

    @settings(max_examples=n, database=None, derandomize=True, phases=[Phase.generate], deadline=None,
              suppress_health_check=list(HealthCheck))
    @given(strategy)
    def collect(value: Any) -> None:
        out.append(value)

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            collect()
        except Exception:  # a strategy that cannot draw: no samples, not a crash
            pass
    return out


class Kit:
    """Builds instances for the subschemas of one *root* schema (refs resolve against the root).

    :param root: the root schema (a tool's inputSchema or outputSchema).
    """

    def __init__(self, root: Any) -> None:
        self.root = root

    # -- helpers -------------------------------------------------------------------------------
    def valid(self, instance: Any, sub: Any) -> bool:
        return is_valid(self.root, instance, sub)

    def deref(self, schema: Any, depth: int = 0) -> Any:
        """*schema* with a top-level local ``$ref`` inlined (siblings kept, per 2020-12 section 8.2.3.1)."""
        while isinstance(schema, Mapping) and isinstance(schema.get("$ref"), str) and depth < 16:
            target = resolve_pointer(self.root, schema["$ref"])
            rest = {k: v for k, v in schema.items() if k != "$ref"}
            if not rest:
                schema = target
            elif isinstance(target, Mapping) and not (set(rest) - ANNOTATION_KEYWORDS):
                schema = {**target, **rest}
            else:
                schema = {**rest, "allOf": [target, *rest.get("allOf", [])]}
            depth += 1
        return schema

    # -- minimal instances ----------------------------------------------------------------------
    def minimal(self, schema: Any, depth: int = 0, *, draw: bool = True) -> Any:
        """A small valid instance of *schema*, checked with the reference validator; NoInstance if none.

        :param draw: fall back to hypothesis draws when construction fails (slower; off for best-effort calls).
        """
        value = self._build(schema, depth, full=False)
        if not self.valid(value, schema):
            for alt in self.draws(schema, 10) if draw else ():
                return alt
            raise NoInstance(f"built {value!r} but it is not valid")
        return value

    def full(self, schema: Any) -> Any:
        """A valid instance with every declared property filled in (falls back to :meth:`minimal`)."""
        try:
            value = self._build(schema, 0, full=True)
        except (NoInstance, KeyError, RecursionError):
            return self.minimal(schema)
        return value if self.valid(value, schema) else self.minimal(schema)

    def draws(self, schema: Any, n: int) -> Iterator[Any]:
        """Valid examples of *schema* from hypothesis-jsonschema (bounded, deterministic, re-checked)."""
        if isinstance(schema, Mapping) and self.root is not schema and "$defs" in self.root:
            schema = {**schema, "$defs": self.root["$defs"]}
        for value in draws(schema, n):
            if self.valid(value, schema):
                yield value

    def invalid_values(self, schema: Any) -> Iterator[Any]:
        """Values *schema* rejects, from a short fixed list (cheap and readable witnesses)."""
        for value in ODD_VALUES:
            if not self.valid(value, schema):
                yield value

    def _build(self, schema: Any, depth: int, full: bool) -> Any:
        if depth > 24:
            raise NoInstance("schema nests too deep to build an instance")
        schema = self.deref(schema)
        if schema is True or schema == {}:
            return None
        if schema is False:
            raise NoInstance("the schema false accepts nothing")
        if not isinstance(schema, Mapping):
            raise NoInstance(f"not a schema: {schema!r}")
        if "const" in schema:
            return copy.deepcopy(schema["const"])
        if isinstance(schema.get("enum"), list):
            for member in schema["enum"]:
                if self.valid(member, schema):
                    return copy.deepcopy(member)
            raise NoInstance("no enum member is valid")
        base = {k: v for k, v in schema.items() if k not in ("anyOf", "oneOf", "allOf")}
        if isinstance(schema.get("allOf"), list) and schema["allOf"]:
            merged = dict(base)
            for branch in schema["allOf"]:
                merged = _merge(merged, self.deref(branch))
            if "anyOf" in schema or "oneOf" in schema:
                merged = {**merged, **{k: schema[k] for k in ("anyOf", "oneOf") if k in schema}}
            return self._build(merged, depth + 1, full)
        for comb in ("anyOf", "oneOf"):
            if isinstance(schema.get(comb), list):
                for branch in schema[comb]:
                    try:
                        value = self._build(_merge(base, self.deref(branch)), depth + 1, full)
                    except (NoInstance, KeyError):
                        continue
                    if self.valid(value, schema):
                        return value
                raise NoInstance(f"no {comb} branch gave a valid instance")
        last: Exception | None = None
        for t in _types_of(schema):
            try:
                value = _BUILDERS[t](self, schema, depth, full)
            except (NoInstance, KeyError) as exc:
                last = exc
                continue
            if self.valid(value, schema):
                return value
        raise NoInstance(str(last) if last else "no type gave a valid instance")

    def _object(self, schema: Mapping[str, Any], depth: int, full: bool) -> Any:
        props = schema.get("properties") if isinstance(schema.get("properties"), Mapping) else {}
        required = [r for r in schema.get("required", []) if isinstance(r, str)]
        names = list(dict.fromkeys(required + (sorted(props) if full else [])))
        out: dict[str, Any] = {}
        for name in names:
            out[name] = self._build(self._property_schema(schema, name), depth + 1, full)
        for dep_name, deps in (schema.get("dependentRequired") or {}).items():
            if dep_name in out:
                for d in deps:
                    out.setdefault(d, self._build(self._property_schema(schema, d), depth + 1, False))
        extra = 0
        while len(out) < int(schema.get("minProperties", 0)):
            optional = [p for p in sorted(props) if p not in out]
            if optional:
                out[optional[0]] = self._build(props[optional[0]], depth + 1, False)
            else:
                out[f"extra{extra}"] = self._build(self._property_schema(schema, f"extra{extra}"), depth + 1, False)
                extra += 1
        return out

    def _property_schema(self, schema: Mapping[str, Any], name: str) -> Any:
        props = schema.get("properties") if isinstance(schema.get("properties"), Mapping) else {}
        if name in props:
            return props[name]
        ap = schema.get("additionalProperties", True)
        return {} if ap is True else ap

    def _array(self, schema: Mapping[str, Any], depth: int, full: bool) -> Any:
        prefix = schema.get("prefixItems") if isinstance(schema.get("prefixItems"), list) else []
        items = schema.get("items", True)
        n = int(schema.get("minItems", 0))
        if full:
            n = max(n, len(prefix), 1 if items is not False else 0)
        out: list[Any] = []
        for i in range(n):
            sub = prefix[i] if i < len(prefix) else items
            out.append(self._build(True if sub is True else sub, depth + 1, full))
        if schema.get("uniqueItems") and len(out) > 1:
            out = self._distinct(items, n, out)
        return out

    def _distinct(self, items: Any, n: int, fallback: list[Any]) -> list[Any]:
        seen: list[Any] = []
        for value in [*self.draws(items, 30)]:
            if value not in seen:
                seen.append(value)
            if len(seen) >= n:
                return seen
        return fallback

    def _string(self, schema: Mapping[str, Any], depth: int, full: bool) -> Any:
        lo = int(schema.get("minLength", 0))
        hi = schema.get("maxLength")
        fmt = schema.get("format")
        if isinstance(fmt, str) and fmt in FORMAT_SAMPLES and "pattern" not in schema:
            return FORMAT_SAMPLES[fmt]
        if isinstance(schema.get("pattern"), str):
            return _regex_example(schema["pattern"], lo, hi)
        return "a" * lo

    def _number(self, schema: Mapping[str, Any], depth: int, full: bool, integer: bool = False) -> Any:
        lo, lo_ex = _bound(schema, "minimum", "exclusiveMinimum", max)
        hi, hi_ex = _bound(schema, "maximum", "exclusiveMaximum", min)
        step = schema.get("multipleOf")
        value: float = 0
        if lo is not None and (value < lo or (lo_ex and value <= lo)):
            value = lo
        elif hi is not None and (value > hi or (hi_ex and value >= hi)):
            value = hi
        if step:
            k = value / step
            value = step * (int(k) if float(k).is_integer() else int(k) + 1)
        candidates = [value, value + (step or 1), value - (step or 1), value + 0.5, value - 0.5]
        if lo is not None and hi is not None:
            candidates.append((lo + hi) / 2)
        for c in candidates:
            c = int(c) if float(c).is_integer() else c
            if integer and not float(c).is_integer():
                continue
            if self.valid(c, schema):
                return c
        raise NoInstance("no number meets the bounds")

    def _integer(self, schema: Mapping[str, Any], depth: int, full: bool) -> Any:
        return self._number(schema, depth, full, integer=True)


def _bound(schema: Mapping[str, Any], inclusive: str, exclusive: str, pick: Any) -> tuple[Any, bool]:
    vals: list[tuple[float, bool]] = []
    if isinstance(schema.get(inclusive), (int, float)) and not isinstance(schema.get(inclusive), bool):
        vals.append((schema[inclusive], False))
    if isinstance(schema.get(exclusive), (int, float)) and not isinstance(schema.get(exclusive), bool):
        vals.append((schema[exclusive], True))
    if not vals:
        return None, False
    best = pick(v for v, _ in vals)
    return best, any(ex for v, ex in vals if v == best)


def _merge(a: Mapping[str, Any], b: Any) -> Any:
    """Shallow conjunction of two schemas, good enough to *build* from (the validator re-checks)."""
    if not isinstance(b, Mapping):
        return a if b is True else b
    out = dict(a)
    for k, v in b.items():
        if k == "required":
            out[k] = list(dict.fromkeys([*out.get(k, []), *v]))
        elif k == "properties" and isinstance(out.get(k), Mapping):
            out[k] = {**out[k], **v}
        else:
            out[k] = v
    return out


_BUILDERS = {
    "object": Kit._object,
    "array": Kit._array,
    "string": Kit._string,
    "number": Kit._number,
    "integer": Kit._integer,
    "boolean": lambda kit, s, d, f: False,
    "null": lambda kit, s, d, f: None,
}
assert set(_BUILDERS) == {"object", "array", "string", "number", "integer", "boolean", "null"}


@functools.lru_cache(maxsize=256)
def pattern_draws(pattern: str, n: int) -> tuple[str, ...]:
    """Up to *n* strings ECMA-262 *pattern* matches, derandomized (the same on every run); none for a
    pattern that is not ECMA-262 or too slow to match."""
    from feeler.generate._strategies import pattern_strings

    try:
        strategy = pattern_strings(pattern)
    except (ValueError, SchemaProblem):
        return ()
    return tuple(dict.fromkeys(v for v in _draw_strategy(strategy, n) if isinstance(v, str)))


@functools.lru_cache(maxsize=256)
def _draws_cached(key: str, n: int) -> tuple[str, ...]:
    try:  # optional (the "witness" extra): extra witnesses only, never required, never on generation's path
        from hypothesis_jsonschema import from_schema
    except ImportError:
        return ()
    values = _draw_strategy(from_schema(json.loads(key)), n)
    return tuple(dict.fromkeys(json.dumps(v, sort_keys=True) for v in values))


def draws(schema: Any, n: int) -> list[Any]:
    """Up to *n* distinct examples of *schema* drawn by hypothesis-jsonschema, the same on every run; none when
    it is not installed or cannot draw on the installed hypothesis (0.23.1 breaks on >= 6.170.10 for objects)."""
    if n <= 0:
        return []
    return [json.loads(s) for s in _draws_cached(_key(schema), n)]
