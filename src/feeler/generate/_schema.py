"""Compile a tool's input schema once: pick the dialect, resolve local references, build the oracle.

Every later stage (builders, strategies, mutators, coverage) works on a :class:`ToolSchema`, so the
dialect check, the reference scan and the validator construction happen exactly once per tool.
Bad schemas become :class:`feeler.errors.SchemaProblem` here, one tool at a time.
"""

from __future__ import annotations

import copy
from collections.abc import Iterator
from typing import Any
from urllib.parse import unquote

import referencing
import referencing.exceptions
from jsonschema import Draft7Validator, Draft201909Validator, Draft202012Validator, validators
from jsonschema.exceptions import SchemaError, ValidationError
from jsonschema.protocols import Validator

from feeler._limits import check_schema_limits
from feeler.errors import SchemaProblem
from feeler.generate import _ecma

__all__ = ["DEFAULT_DIALECT", "DIALECTS", "ToolSchema", "compile_schema", "pointer"]

#: Dialects we generate for, keyed by the ``$schema`` URI without its trailing ``#``.
#: MCP 2025-11-25 basic/index ("JSON Schema usage"): no ``$schema`` means 2020-12.
DIALECTS: dict[str, type[Validator]] = {
    "https://json-schema.org/draft/2020-12/schema": Draft202012Validator,
    "https://json-schema.org/draft/2019-09/schema": Draft201909Validator,
    "http://json-schema.org/draft-07/schema": Draft7Validator,
}
DEFAULT_DIALECT = "https://json-schema.org/draft/2020-12/schema"

#: Keywords whose value is one subschema.
SCHEMA_KEYWORDS = (
    "additionalProperties", "unevaluatedProperties", "additionalItems", "unevaluatedItems",
    "contains", "propertyNames", "not", "if", "then", "else",
)  # fmt: skip
#: Keywords whose value is a list of subschemas.
SCHEMA_LIST_KEYWORDS = ("allOf", "anyOf", "oneOf", "prefixItems")
#: Keywords whose value maps names to subschemas.
SCHEMA_MAP_KEYWORDS = ("properties", "patternProperties", "$defs", "definitions", "dependentSchemas")


# -- the oracle judges patterns the ECMA-262 way (JSON Schema 2020-12 validation 6.3.3, core 6.4) --------


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


_ECMA_KEYWORDS = {"pattern": _pattern, "patternProperties": _pattern_properties, "additionalProperties": _additional_properties}
#: The oracle per dialect: jsonschema's validator with the three pattern-reading keywords read the ECMA-262 way.
#: (``unevaluatedProperties`` still reads ``patternProperties`` with Python's re; see DEVELOPERS.md.)
ORACLES: dict[type[Validator], type[Validator]] = {
    cls: validators.extend(cls, _ECMA_KEYWORDS) for cls in (Draft7Validator, Draft201909Validator, Draft202012Validator)
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


class ToolSchema:
    """One input schema, compiled once.

    :param schema: the JSON Schema (a dict or a boolean schema).
    :param name: the tool's name, used in messages only.
    :raises SchemaProblem: ``unknown-dialect``, ``invalid-schema``, ``remote-ref``, ``unresolvable-ref``
        or ``recursive-ref``; nothing is ever fetched over the network.
    """

    def __init__(self, schema: Any, *, name: str | None = None) -> None:
        self.name = name
        self.schema = schema
        where = f"tool {name!r}: " if name else ""
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
        self._anchors = self._collect_anchors()
        self._check_references()
        self._check_patterns()
        # An empty registry: local references resolve against the root, anything else is unresolvable
        # (jsonschema's default registry would fetch remote references over the network).
        self.validator: Validator = ORACLES[self.validator_class](
            schema,
            format_checker=self.validator_class.FORMAT_CHECKER,
            registry=referencing.Registry(),
        )
        self._sub_validators: dict[int, tuple[Any, Validator]] = {}
        self._inlined: dict[int, tuple[Any, Any]] = {}

    # -- references ---------------------------------------------------------------------------------
    def _collect_anchors(self) -> dict[str, str]:
        anchors: dict[str, str] = {}

        def visit(node: Any, at: tuple[str | int, ...]) -> None:
            if isinstance(node, dict):
                for key in ("$anchor", "$dynamicAnchor"):
                    if isinstance(node.get(key), str):
                        anchors[node[key]] = pointer(at)
                if isinstance(node.get("$id"), str) and node["$id"].startswith("#") and at:
                    anchors[node["$id"][1:]] = pointer(at)  # draft-07 plain-name fragment
            for rel, sub in subschemas(node):
                visit(sub, at + rel)

        visit(self.schema, ())
        return anchors

    def resolve(self, ref: str) -> tuple[Any, str]:
        """Return ``(subschema, pointer)`` for a local *ref*.

        :raises SchemaProblem: ``remote-ref`` for a reference outside this document,
            ``unresolvable-ref`` for a local one that points nowhere.
        """
        where = f"tool {self.name!r}: " if self.name else ""
        base, _, fragment = ref.partition("#")
        root_id = self.schema.get("$id", "") if isinstance(self.schema, dict) else ""
        if base and base != str(root_id).partition("#")[0]:
            raise SchemaProblem(
                f"{where}$ref {ref!r} points outside the schema; feeler resolves only local references "
                "('#/$defs/...') and never fetches schemas over the network. Inline the referenced schema.",
                reason="remote-ref",
            )
        fragment = unquote(fragment)
        if fragment and not fragment.startswith("/"):
            if fragment not in self._anchors:
                raise SchemaProblem(f"{where}$ref {ref!r}: no anchor {fragment!r} in the schema", reason="unresolvable-ref")
            fragment = self._anchors[fragment]
        node: Any = self.schema
        for raw in fragment.split("/")[1:] if fragment else []:
            part = raw.replace("~1", "/").replace("~0", "~")
            try:
                node = node[int(part)] if isinstance(node, list) else node[part]
            except (KeyError, IndexError, ValueError, TypeError):
                raise SchemaProblem(
                    f"{where}$ref {ref!r} cannot be resolved: no {part!r} at {fragment!r}", reason="unresolvable-ref"
                ) from None
        return node, fragment

    def _check_references(self) -> None:
        where = f"tool {self.name!r}: " if self.name else ""
        done: set[str] = set()

        def visit(node: Any, stack: tuple[str, ...]) -> None:
            if not isinstance(node, dict):
                return
            for key in ("$dynamicRef", "$recursiveRef"):
                if key in node:
                    raise SchemaProblem(
                        f"{where}{key} is not supported for generation (it makes the schema recursive)",
                        reason="recursive-ref",
                    )
            ref = node.get("$ref")
            if isinstance(ref, str):
                target, at = self.resolve(ref)
                if at in stack:
                    raise SchemaProblem(
                        f"{where}$ref {ref!r} is recursive ({' -> '.join(stack[stack.index(at):] + (at,)) or '#'}); "
                        "feeler generates from finite schemas only. Bound the nesting by unrolling it a few levels.",
                        reason="recursive-ref",
                    )
                if at not in done:
                    visit(target, stack + (at,))
                    done.add(at)
            for _, sub in subschemas(node):
                visit(sub, stack)

        visit(self.schema, ("",))

    def _check_patterns(self) -> None:
        where = f"tool {self.name!r}: " if self.name else ""

        def visit(node: Any, at: tuple[str | int, ...]) -> None:
            if isinstance(node, dict):
                found = [(("pattern",), node["pattern"])] if isinstance(node.get("pattern"), str) else []
                found += [(("patternProperties", p), p) for p in node.get("patternProperties") or {} if isinstance(p, str)]
                for rel, regex in found:
                    try:
                        _ecma.check(regex)
                    except _ecma.PatternError as exc:
                        raise SchemaProblem(f"{where}{pointer(at + rel)}: {exc}", reason=exc.reason) from None
            for rel, sub in subschemas(node):
                visit(sub, at + rel)

        visit(self.schema, ())

    # -- the oracle ---------------------------------------------------------------------------------
    def is_valid(self, instance: Any) -> bool:
        """The oracle: ``jsonschema`` with format checking on, compiled once."""
        return self.validator.is_valid(instance)

    def errors(self, instance: Any) -> list[ValidationError]:
        """Every error the oracle reports for *instance* (top level; combinator details sit in ``context``)."""
        return list(self.validator.iter_errors(instance))

    def valid_under(self, subschema: Any, instance: Any) -> bool:
        """Is *instance* valid against *subschema*, a node of this document (local refs still resolve)?"""
        if subschema is True or subschema == {}:
            return True
        if subschema is False:
            return False
        # Keyed by id(); the entry keeps the node alive so an id is never reused for another node.
        entry = self._sub_validators.get(id(subschema))
        if entry is None:
            entry = self._sub_validators[id(subschema)] = (subschema, self.validator.evolve(schema=subschema))
        return entry[1].is_valid(instance)

    # -- inlining, for hypothesis-jsonschema -----------------------------------------------------------
    def inlined(self, node: Any) -> Any:
        """*node* with every local ``$ref`` replaced by its target (finite: recursion was refused above).

        hypothesis-jsonschema resolves references itself, but only against the fragment it is given,
        so a subschema handed to it must carry its targets inline.
        """
        entry = self._inlined.get(id(node))
        if entry is None:
            entry = self._inlined[id(node)] = (node, self._inline(node))
        return entry[1]

    def _inline(self, node: Any) -> Any:
        if isinstance(node, list):
            return [self._inline(n) for n in node]
        if not isinstance(node, dict):
            return node
        out: dict[str, Any] = {}
        for key, value in node.items():
            if key in ("$defs", "definitions", "$schema", "$id", "$anchor", "$comment"):
                continue
            if key in ("enum", "const", "default", "examples"):
                out[key] = copy.deepcopy(value)
            elif key == "$ref":
                continue
            elif key in SCHEMA_KEYWORDS or key in SCHEMA_LIST_KEYWORDS or key == "items":
                out[key] = self._inline(value)
            elif key in SCHEMA_MAP_KEYWORDS or key == "dependencies":
                out[key] = {k: self._inline(v) for k, v in value.items()} if isinstance(value, dict) else value
            else:
                out[key] = value
        if isinstance(node.get("$ref"), str):
            target = self._inline(self.resolve(node["$ref"])[0])
            if self.ref_overrides or not out:
                return target
            out = {"allOf": [target, out]}
        return out


def compile_schema(schema: Any, *, name: str | None = None) -> ToolSchema:
    """Return *schema* compiled as a :class:`ToolSchema` (a :class:`ToolSchema` is returned as is)."""
    check_schema_limits(schema, name=name)  # feeler._limits: depth, size, enum (a ToolSchema passes as is)
    return schema if isinstance(schema, ToolSchema) else ToolSchema(schema, name=name)

