"""A tool's input schema read once: the dialect, the references, the oracle.

:class:`ToolSchema` picks the dialect, checks the schema against its metaschema, resolves every
reference with ``referencing`` (the library ``jsonschema`` itself uses) against the resources the
document embeds (``$id``, ``$anchor``, ``$defs``, ``definitions``), marks the references that recurse,
and builds the oracle. Nothing is ever fetched: a reference outside the document is a problem.
The compiled model every generator reads (:mod:`._model`) is built on top of it. Bad schemas become
:class:`feeler.errors.SchemaProblem` here, one tool at a time.
"""

from __future__ import annotations

import copy
import functools
from collections.abc import Iterator
from typing import Any
from urllib.parse import urldefrag, urljoin

import referencing
import referencing.exceptions
import referencing.jsonschema
from jsonschema import Draft7Validator, Draft201909Validator, Draft202012Validator, validators
from jsonschema.exceptions import SchemaError, ValidationError
from jsonschema.protocols import Validator

from feeler._limits import LOWER_COUNTS, count_problem
from feeler.errors import SchemaProblem
from feeler.generate import _ecma

__all__ = ["DEFAULT_DIALECT", "DEFAULT_RECURSION_DEPTH", "DIALECTS", "ToolSchema", "ecma_validator", "pointer", "subschemas"]

#: Dialects we generate for, keyed by the ``$schema`` URI without its trailing ``#``.
#: MCP 2025-11-25 basic/index ("JSON Schema usage"): no ``$schema`` means 2020-12.
DIALECTS: dict[str, type[Validator]] = {
    "https://json-schema.org/draft/2020-12/schema": Draft202012Validator,
    "https://json-schema.org/draft/2019-09/schema": Draft201909Validator,
    "http://json-schema.org/draft-07/schema": Draft7Validator,
}
DEFAULT_DIALECT = "https://json-schema.org/draft/2020-12/schema"
#: How often generation follows a recursive reference on one path (a setting: ``recursion_depth``).
DEFAULT_RECURSION_DEPTH = 3
#: Keywords that point at another schema by URI.
REF_KEYWORDS = ("$ref", "$dynamicRef", "$recursiveRef")

#: Keywords whose value is one subschema.
SCHEMA_KEYWORDS = (
    "additionalProperties", "unevaluatedProperties", "additionalItems", "unevaluatedItems",
    "contains", "propertyNames", "not", "if", "then", "else",
)  # fmt: skip
#: Keywords whose value is a list of subschemas.
SCHEMA_LIST_KEYWORDS = ("allOf", "anyOf", "oneOf", "prefixItems")
#: Keywords whose value maps names to subschemas.
SCHEMA_MAP_KEYWORDS = ("properties", "patternProperties", "$defs", "definitions", "dependentSchemas")


# -- the oracle judges patterns the ECMA-262 way (JSON Schema 2020-12 validation 6.3.3, core 6.4), each --
# -- match under a time budget (_ecma.search: the regex engine, never Python's re) ---------------------


def _pattern(validator: Any, regex: str, instance: Any, schema: Any) -> Iterator[ValidationError]:
    if validator.is_type(instance, "string") and not _ecma.search(regex, instance):
        yield ValidationError(f"{instance!r} does not match {regex!r}")


def _pattern_properties(validator: Any, patterns: dict, instance: Any, schema: Any) -> Iterator[ValidationError]:
    if not validator.is_type(instance, "object"):
        return
    for regex, subschema in patterns.items():
        for key, value in instance.items():
            if _ecma.search(regex, key):
                yield from validator.descend(value, subschema, path=key, schema_path=regex)


def _additional(instance: dict, schema: dict) -> list[str]:
    props = schema.get("properties", {})
    patterns = list(schema.get("patternProperties", {}))
    return [k for k in instance if k not in props and not any(_ecma.search(p, k) for p in patterns)]


def _additional_properties(validator: Any, spec: Any, instance: Any, schema: Any) -> Iterator[ValidationError]:
    if not validator.is_type(instance, "object"):
        return
    extras = _additional(instance, schema)
    if validator.is_type(spec, "object"):
        for extra in extras:
            yield from validator.descend(instance[extra], spec, path=extra)
    elif not spec and extras:
        yield ValidationError(f"Additional properties are not allowed ({', '.join(map(repr, sorted(extras)))} unexpected)")


def _valid(errors: Iterator[Any]) -> bool:
    return next(errors, None) is None


def _evaluated_keys(validator: Any, instance: dict, schema: Any, legacy: bool) -> list[Any]:
    """The keys of *instance* that *schema* evaluates, as jsonschema 4.26 finds them for
    ``unevaluatedProperties`` (2020-12; 2019-09 with *legacy*), with ``patternProperties`` read by
    :func:`_ecma.search` instead of Python's ``re`` (2020-12 core 11.3)."""
    if validator.is_type(schema, "boolean"):
        return []
    keys: list[Any] = []
    targets = [validator._resolver.lookup(schema["$ref"])] if schema.get("$ref") is not None else []  # noqa: SLF001
    if legacy and "$recursiveRef" in schema:
        targets.append(referencing.jsonschema.lookup_recursive_ref(validator._resolver))  # noqa: SLF001
    elif not legacy and schema.get("$dynamicRef") is not None:
        targets.append(validator._resolver.lookup(schema["$dynamicRef"]))  # noqa: SLF001
    for found in targets:
        keys += _evaluated_keys(validator.evolve(schema=found.contents, _resolver=found.resolver), instance, found.contents, legacy)
    if legacy:
        for keyword in ("properties", "additionalProperties", "unevaluatedProperties"):
            value = schema.get(keyword)
            if value is True:
                keys += instance.keys()
            elif validator.is_type(value, "object"):
                keys += [name for name in value if name in instance]
    else:
        if validator.is_type(schema.get("properties"), "object"):
            keys += schema["properties"].keys() & instance.keys()
        for keyword in ("additionalProperties", "unevaluatedProperties"):
            if (sub := schema.get(keyword)) is not None:
                keys += [key for key, value in instance.items() if _valid(validator.descend(value, sub))]
    for regex in schema.get("patternProperties", {}):
        keys += [key for key in instance if _ecma.search(regex, key)]
    for trigger, sub in schema.get("dependentSchemas", {}).items():
        if trigger in instance:
            keys += _evaluated_keys(validator, instance, sub, legacy)
    for keyword in ("allOf", "oneOf", "anyOf"):
        for sub in schema.get(keyword, []):
            if _valid(validator.descend(instance, sub)):
                keys += _evaluated_keys(validator, instance, sub, legacy)
    if "if" in schema:
        if validator.evolve(schema=schema["if"]).is_valid(instance):
            keys += _evaluated_keys(validator, instance, schema["if"], legacy)
            if "then" in schema:
                keys += _evaluated_keys(validator, instance, schema["then"], legacy)
        elif "else" in schema:
            keys += _evaluated_keys(validator, instance, schema["else"], legacy)
    return keys


def _unevaluated_properties(validator: Any, spec: Any, instance: Any, schema: Any, legacy: bool = False) -> Iterator[ValidationError]:
    if not validator.is_type(instance, "object"):
        return
    evaluated = _evaluated_keys(validator, instance, schema, legacy)
    unevaluated = [key for key in instance if key not in evaluated
                   for _ in validator.descend(instance[key], spec, path=key, schema_path=key)]  # fmt: skip
    if unevaluated:
        # jsonschema's wording (_keywords.unevaluatedProperties, _utils.extras_msg)
        names = sorted(unevaluated, key=str) if spec is False else unevaluated
        listed = ", ".join(repr(name) for name in names) + (" was" if len(names) == 1 else " were")
        if spec is False:
            yield ValidationError(f"Unevaluated properties are not allowed ({listed} unexpected)")
        else:
            yield ValidationError(f"Unevaluated properties are not valid under the given schema ({listed} unevaluated and invalid)")


@functools.lru_cache(maxsize=8)
def ecma_validator(cls: type[Validator]) -> type[Validator]:
    """*cls* (a ``jsonschema`` validator class) with every keyword that reads a pattern (``pattern``,
    ``patternProperties``, ``additionalProperties``, ``unevaluatedProperties``) reading it the ECMA-262
    way, each match under a time budget (:func:`_ecma.search`). The oracle of input schemas, and the
    validator of output schemas (:mod:`feeler.check.schemas`)."""
    legacy = "$recursiveRef" in cls.VALIDATORS  # 2019-09
    keywords = {
        "pattern": _pattern,
        "patternProperties": _pattern_properties,
        "additionalProperties": _additional_properties,
        "unevaluatedProperties": functools.partial(_unevaluated_properties, legacy=legacy),
    }
    return validators.extend(cls, {k: v for k, v in keywords.items() if k in cls.VALIDATORS})


#: The oracle per dialect: jsonschema's validator with the pattern-reading keywords read the ECMA-262 way.
ORACLES: dict[type[Validator], type[Validator]] = {
    cls: ecma_validator(cls) for cls in (Draft7Validator, Draft201909Validator, Draft202012Validator)
}


def _ecma_regex(value: object) -> bool:
    if isinstance(value, str):
        _ecma.translate(value)  # PatternError (a ValueError) says the pattern is not ECMA-262
    return True


def _meta_formats(cls: type[Validator]) -> Any:
    # The metaschema's "regex" format read the ECMA-262 way (JSON Schema core 6.4), not by Python's re.compile.
    checker = copy.deepcopy(cls.FORMAT_CHECKER)
    checker.checks("regex", raises=_ecma.PatternError)(_ecma_regex)
    return checker


_META_FORMATS = {cls: _meta_formats(cls) for cls in (Draft7Validator, Draft201909Validator, Draft202012Validator)}


def pointer(parts: tuple[str | int, ...] | list[str | int]) -> str:
    """Render schema path *parts* as a JSON Pointer (RFC 6901): ``("properties", "a~b")`` -> ``/properties/a~0b``."""
    return "".join("/" + str(p).replace("~", "~0").replace("/", "~1") for p in parts)


def _normalise_dialect(uri: str) -> str:
    uri = uri.rstrip("#")
    # The same dialect is often written with http or https; JSON Schema names one, validators accept both.
    for known in DIALECTS:
        if uri.split("://", 1)[-1] == known.split("://", 1)[-1]:
            return known
    return uri


def subschemas(node: Any) -> Iterator[tuple[tuple[str | int, ...], Any]]:
    """Yield ``(relative path, subschema)`` for every direct subschema of *node* (data keywords skipped)."""
    if not isinstance(node, dict):
        return
    for key in SCHEMA_KEYWORDS:
        if key in node:
            yield (key,), node[key]
    for key in SCHEMA_LIST_KEYWORDS:
        if isinstance(node.get(key), list):
            for i, sub in enumerate(node[key]):
                yield (key, i), sub
    for key in SCHEMA_MAP_KEYWORDS:
        if isinstance(node.get(key), dict):
            for name, sub in node[key].items():
                yield (key, name), sub
    items = node.get("items")
    if isinstance(items, list):  # draft-07 / 2019-09 tuple form
        for i, sub in enumerate(items):
            yield ("items", i), sub
    elif items is not None:
        yield ("items",), items
    deps = node.get("dependencies")
    if isinstance(deps, dict):  # draft-07: a list of names or a schema per property
        for name, sub in deps.items():
            if isinstance(sub, (dict, bool)):
                yield ("dependencies", name), sub


_SPECS = {
    Draft202012Validator: referencing.jsonschema.DRAFT202012,
    Draft201909Validator: referencing.jsonschema.DRAFT201909,
    Draft7Validator: referencing.jsonschema.DRAFT7,
}


def _pointers(document: Any) -> dict[int, str]:
    """``id(node) -> JSON Pointer`` for every object in *document* (iterative: no recursion limit)."""
    out: dict[int, str] = {}
    stack: list[tuple[Any, str]] = [(document, "")]
    while stack:  # bounded: every container of the (size-limited) document is visited once
        node, at = stack.pop()
        if isinstance(node, dict):
            out.setdefault(id(node), at)
            stack.extend((v, at + pointer((k,))) for k, v in node.items())
        elif isinstance(node, list):
            stack.extend((v, f"{at}/{i}") for i, v in enumerate(node))
    return out


class ToolSchema:
    """One input schema, read once: dialect, references, oracle.

    :param schema: the JSON Schema (a dict or a boolean schema).
    :param name: the tool's name, used in messages only.
    :param recursion_depth: how often generation follows a recursive reference on one path
        (:data:`DEFAULT_RECURSION_DEPTH`); validation is never bounded.
    :raises SchemaProblem: ``unknown-dialect``, ``invalid-schema``, ``remote-ref``, ``unresolvable-ref``,
        ``invalid-pattern``, ``slow-pattern``, or ``over-limit`` (a lower count over
        :data:`feeler._limits.MAX_COUNT`); nothing is ever fetched over the network.
    """

    def __init__(self, schema: Any, *, name: str | None = None, recursion_depth: int = DEFAULT_RECURSION_DEPTH) -> None:
        self.name = name
        self.schema = schema
        self.recursion_depth = max(0, int(recursion_depth))
        where = self.where = f"tool {name!r}: " if name else ""
        if not isinstance(schema, (dict, bool)):
            raise SchemaProblem(
                f"{where}the input schema must be a JSON object (or true/false), got {type(schema).__name__}",
                reason="invalid-schema",
            )
        declared = schema.get("$schema", DEFAULT_DIALECT) if isinstance(schema, dict) else DEFAULT_DIALECT
        if not isinstance(declared, str):
            raise SchemaProblem(f"{where}$schema must be a string, got {declared!r}", reason="invalid-schema")
        self.dialect = _normalise_dialect(declared)
        if self.dialect not in DIALECTS:
            raise SchemaProblem(
                f"{where}unknown JSON Schema dialect $schema={declared!r}; feeler supports "
                + ", ".join(sorted(DIALECTS))
                + " (no $schema means 2020-12). Declare one of these.",
                reason="unknown-dialect",
            )
        self.validator_class = DIALECTS[self.dialect]
        #: draft-07 ignores every keyword beside ``$ref``; later drafts apply them too.
        self.ref_overrides = self.validator_class is Draft7Validator
        try:
            self.validator_class.check_schema(schema, format_checker=_META_FORMATS[self.validator_class])
        except SchemaError as exc:
            at = pointer(list(exc.absolute_path)) or "the root"
            raise SchemaProblem(
                f"{where}not a valid {self.dialect} schema at {at}: {exc.message}", reason="invalid-schema"
            ) from exc
        # The document's own resources only (the root and every embedded $id), crawled once; a registry
        # with no retrieval function, so a reference outside the document is unresolvable, never fetched.
        self.spec = _SPECS[self.validator_class]
        root = self.spec.create_resource(schema)
        self.registry = referencing.Registry().with_resource(root.id() or "", root).crawl()
        self.root_resolver = self.registry.resolver(base_uri=root.id() or "")
        self._at = _pointers(schema)
        self._resolvers: dict[int, Any] = {}
        #: JSON Pointers of the reference keywords that lead back to a node above them (``/$defs/node/...``).
        self.recursive_refs: frozenset[str] = frozenset()
        self._check_references()
        self._check_keywords()
        self.validator: Validator = ORACLES[self.validator_class](
            schema, format_checker=self.validator_class.FORMAT_CHECKER, registry=self.registry
        )
        self._sub_validators: dict[int, tuple[Any, Validator]] = {}

    # -- references ---------------------------------------------------------------------------------
    def resolver_for(self, node: Any) -> Any:
        """The ``referencing`` resolver in force at *node* (its base URI follows every ``$id`` above it)."""
        return self._resolvers.get(id(node), self.root_resolver)

    def lookup(self, ref: str, resolver: Any = None, keyword: str = "$ref") -> tuple[Any, str, Any]:
        """``(subschema, JSON Pointer, resolver there)`` for *ref* seen where *resolver* is in force.

        :raises SchemaProblem: ``remote-ref`` for a reference outside this document,
            ``unresolvable-ref`` for one inside it that points nowhere.
        """
        resolver = resolver if resolver is not None else self.root_resolver
        try:
            resolved = referencing.jsonschema.lookup_recursive_ref(resolver) if keyword == "$recursiveRef" else resolver.lookup(ref)
        except (referencing.exceptions.PointerToNowhere, referencing.exceptions.NoSuchAnchor,
                referencing.exceptions.InvalidAnchor) as exc:  # fmt: skip
            raise SchemaProblem(f"{self.where}{keyword} {ref!r} cannot be resolved in the schema: {exc}",
                                reason="unresolvable-ref") from None  # fmt: skip
        except referencing.exceptions.Unresolvable:
            raise SchemaProblem(
                f"{self.where}{keyword} {ref!r} points outside the schema; feeler resolves references inside the "
                "document only ('#/$defs/...', an '$id' or '$anchor' the schema declares) and never fetches "
                "schemas over the network. Inline the referenced schema.",
                reason="remote-ref",
            ) from None
        contents = resolved.contents
        at = self._at.get(id(contents))
        if at is None:
            if not isinstance(contents, bool):
                raise SchemaProblem(f"{self.where}{keyword} {ref!r} does not point at a schema", reason="unresolvable-ref")
            base, fragment = urldefrag(urljoin(str(resolver._base_uri), ref))  # noqa: SLF001 - the base URI in force
            home = self.registry.get(base)
            at = (self._at.get(id(home.contents), "") if home is not None else "") + fragment
        return contents, at, resolved.resolver

    def resolve(self, ref: str, resolver: Any = None) -> tuple[Any, str]:
        """``(subschema, JSON Pointer)`` for *ref* (see :meth:`lookup`)."""
        contents, at, _ = self.lookup(ref, resolver)
        return contents, at

    def _check_references(self) -> None:
        """Resolve every reference once (so a bad one fails here, per tool) and find the recursive ones."""
        edges: dict[str, list[str]] = {}
        refs: list[tuple[str, str]] = []
        stack: list[tuple[Any, str, Any]] = [(self.schema, "", self.root_resolver)]
        while stack:  # bounded: each document node is visited once
            node, at, resolver = stack.pop()
            if isinstance(node, dict):
                if isinstance(node.get("$id"), str) and not node["$id"].startswith("#"):
                    resolver = resolver.in_subresource(self.spec.create_resource(node))
                self._resolvers[id(node)] = resolver
                for keyword in REF_KEYWORDS:
                    if isinstance(node.get(keyword), str):
                        _, target, _ = self.lookup(node[keyword], resolver, keyword)
                        edges.setdefault(at, []).append(target)
                        refs.append((at + pointer((keyword,)), target))
            for rel, sub in subschemas(node):
                edges.setdefault(at, []).append(at + pointer(rel))
                stack.append((sub, at + pointer(rel), resolver))
        recursive = set()
        for ref_at, target in refs:
            holder = ref_at.rpartition("/")[0]
            seen, todo = set(), [target]
            while todo:  # bounded by the number of document nodes
                here = todo.pop()
                if here == holder:
                    recursive.add(ref_at)
                    break
                if here not in seen:
                    seen.add(here)
                    todo.extend(edges.get(here, ()))
        self.recursive_refs = frozenset(recursive)

    def _check_keywords(self) -> None:
        """Every pattern through :func:`_ecma.check`, every lower count through :func:`count_problem`."""
        self._pattern_places: dict[str, str] = {}

        def visit(node: Any, at: tuple[str | int, ...]) -> None:
            if isinstance(node, dict):
                for keyword in LOWER_COUNTS:
                    problem = count_problem(keyword, node.get(keyword))
                    if problem:
                        raise SchemaProblem(f"{self.where}{pointer((*at, keyword))}: {problem}", reason="over-limit")
                found = [(("pattern",), node["pattern"])] if isinstance(node.get("pattern"), str) else []
                found += [(("patternProperties", p), p) for p in node.get("patternProperties") or {} if isinstance(p, str)]
                for rel, regex in found:
                    self._pattern_places.setdefault(regex, pointer(at + rel))
                    try:
                        _ecma.check(regex)
                    except _ecma.PatternError as exc:
                        raise SchemaProblem(f"{self.where}{pointer(at + rel)}: {exc}", reason=exc.reason) from None
            for rel, sub in subschemas(node):
                visit(sub, at + rel)

        visit(self.schema, ())

    def pattern_place(self, pattern: str) -> str:
        """``"tool 'x': /properties/a/pattern: "``: the tool and the first place *pattern* is written
        (a ``pattern`` or a ``patternProperties`` key), for messages."""
        place = self._pattern_places.get(pattern)
        return f"{self.where}{place}: " if place else self.where

    # -- the oracle ---------------------------------------------------------------------------------
    def is_valid(self, instance: Any) -> bool:
        """The oracle: ``jsonschema`` with format checking on, compiled once."""
        return self.validator.is_valid(instance)

    def errors(self, instance: Any) -> list[ValidationError]:
        """Every error the oracle reports for *instance* (top level; combinator details sit in ``context``)."""
        return list(self.validator.iter_errors(instance))

    def validator_for(self, subschema: Any) -> Validator:
        """The oracle for *subschema*, a node of this document (its references resolve where it sits)."""
        # Keyed by id(); the entry keeps the node alive so an id is never reused for another node.
        entry = self._sub_validators.get(id(subschema))
        if entry is None:
            made = self.validator.evolve(schema=subschema, _resolver=self.resolver_for(subschema))
            entry = self._sub_validators[id(subschema)] = (subschema, made)
        return entry[1]

    def valid_under(self, subschema: Any, instance: Any) -> bool:
        """Is *instance* valid against *subschema*, a node of this document?"""
        if subschema is True or subschema == {}:
            return True
        if subschema is False:
            return False
        return self.validator_for(subschema).is_valid(instance)
