"""Catalog audit: checks on what a server advertises, run without calling a tool.

They are ordinary checks of kind ``catalog`` in the same registry (with ``schema_usable`` and ``tool_name``
from :mod:`feeler.check.builtin` and ``poisoned_text`` from :mod:`feeler.check.poison`). A check that
looks at one tool reads ``ctx.tool``; a catalog-wide check runs once with ``ctx.tool is None`` and reads
``ctx.catalog``. ``feeler audit TARGET`` runs only these; ``feeler check`` and the pytest plugin's
``catalog`` item run them too.
"""

from __future__ import annotations

import json
import re
from collections.abc import Iterator
from difflib import SequenceMatcher, get_close_matches
from typing import Any

from feeler.check.registry import CallContext, Problem, register

__all__ = ["MISTAKEN_KEYWORDS", "estimate_tokens", "near_duplicate_groups", "schema_places"]

#: Keywords that are not JSON Schema (2020-12) but are often written for one that is, mostly by schema
#: generators and by hand (common practice: pydantic/Field, OpenAPI and form libraries use these names).
MISTAKEN_KEYWORDS: dict[str, str] = {
    "ge": "minimum", "le": "maximum", "gt": "exclusiveMinimum", "lt": "exclusiveMaximum",
    "min": "minimum", "max": "maximum", "minValue": "minimum", "maxValue": "maximum",
    "min_length": "minLength", "max_length": "maxLength", "minlength": "minLength", "maxlength": "maxLength",
    "min_items": "minItems", "max_items": "maxItems", "minitems": "minItems", "maxitems": "maxItems",
    "regex": "pattern", "regexp": "pattern", "multiple_of": "multipleOf", "choices": "enum",
    "optional": "required (on the parent object)", "allowed": "enum", "values": "enum",
}  # fmt: skip
#: JSON Schema 2020-12 keywords (Core and Validation vocabularies, plus format/content/meta-data), for
#: "did you mean" on near misses such as ``maximun``.
KEYWORDS = (
    "$schema", "$id", "$ref", "$defs", "$anchor", "$dynamicRef", "$dynamicAnchor", "$comment", "$vocabulary",
    "type", "enum", "const", "multipleOf", "maximum", "exclusiveMaximum", "minimum", "exclusiveMinimum",
    "maxLength", "minLength", "pattern", "maxItems", "minItems", "uniqueItems", "maxContains", "minContains",
    "maxProperties", "minProperties", "required", "dependentRequired", "properties", "patternProperties",
    "additionalProperties", "unevaluatedProperties", "propertyNames", "items", "prefixItems", "contains",
    "unevaluatedItems", "allOf", "anyOf", "oneOf", "not", "if", "then", "else", "dependentSchemas",
    "format", "contentEncoding", "contentMediaType", "contentSchema", "title", "description", "default",
    "deprecated", "readOnly", "writeOnly", "examples", "definitions", "dependencies", "additionalItems",
)  # fmt: skip


#: Keywords that only annotate (JSON Schema 2020-12 Validation 9): a typo loses text, not a constraint.
_ANNOTATIONS = frozenset({"title", "description", "default", "deprecated", "readOnly", "writeOnly", "examples", "$comment"})


def schema_places(schema: Any, base: str = "") -> Iterator[tuple[str, dict[str, Any]]]:
    """Every schema object inside *schema* with its JSON Pointer (RFC 6901), the root first (bounded by
    the schema's size: each subschema is visited once)."""
    from feeler.generate._schema import pointer, subschemas

    stack: list[tuple[str, Any]] = [(base, schema)]
    while stack:
        where, node = stack.pop()
        if not isinstance(node, dict):
            continue
        yield where, node
        children = [(where + pointer(path), sub) for path, sub in subschemas(node)]
        stack.extend(reversed(children))


def _schemas(ctx: CallContext) -> Iterator[tuple[str, Any]]:
    tool = ctx.tool
    if tool is None:
        return
    yield "inputSchema", tool.input_schema
    if tool.output_schema is not None:
        yield "outputSchema", tool.output_schema


@register("schema_keywords", applies_to=("catalog",), reference="JSON Schema 2020-12 Core 6.5 (unknown keywords are ignored), Validation 6")
def schema_keywords(ctx: CallContext) -> Iterator[Problem]:
    """No keyword that JSON Schema ignores where one it knows was meant (``ge`` for ``minimum``,
    ``required: true`` on a property...): the constraint is silently absent."""
    for which, schema in _schemas(ctx):
        for where, node in schema_places(schema):
            for key, value in node.items():
                meant = MISTAKEN_KEYWORDS.get(key)
                if key == "required" and isinstance(value, bool):
                    meant = "required: [names] on the parent object"
                elif meant is None and key not in KEYWORDS and not key.startswith(("x-", "$")):
                    same_letters = {k.lower(): k for k in KEYWORDS}.get(key.lower())
                    meant = same_letters or next(iter(get_close_matches(key, KEYWORDS, n=1, cutoff=0.85)), None)
                if meant in _ANNOTATIONS:  # a misspelt annotation: nothing is unenforced, the text is lost
                    yield Problem(f"{which} at {where or '/'}: {key!r} is not a JSON Schema keyword; did you mean "
                                  f"{meant}? (keywordLocation {where}/{key})", severity="warning", error_class=f"mistaken:{key}")
                elif meant:
                    yield Problem(
                        f"{which} at {where or '/'}: {key!r} is not a JSON Schema keyword, so nothing enforces it; "
                        f"did you mean {meant}? (keywordLocation {where}/{key})",
                        error_class=f"mistaken:{key}",
                    )


@register("output_schema_valid", applies_to=("catalog",), reference="MCP 2025-06-18 server/tools (outputSchema: an object schema); JSON Schema 2020-12 meta-schema; jsonschema")
def output_schema_valid(ctx: CallContext) -> Iterator[Problem]:
    """The outputSchema is valid for its dialect (checked against the meta-schema), rooted at an object, within
    feeler's limits (depth, size, enum) and free of patterns that are not ECMA-262 or take exponential time."""
    from jsonschema.validators import validator_for

    from feeler.check.schemas import output_schema_problem
    from feeler.generate._schema import pointer

    tool = ctx.tool
    if tool is None or tool.output_schema is None:
        return
    schema = tool.output_schema
    if not isinstance(schema, dict) or schema.get("type") != "object":
        yield Problem('the outputSchema must have "type": "object" at its root (structuredContent is an object)', error_class="output-root-type")
    if not isinstance(schema, dict):
        return
    problem = output_schema_problem(schema)  # before the meta-schema: a deep schema would overflow its recursion
    if problem is not None:
        message, reason = problem
        yield Problem(f"feeler will not validate answers against the outputSchema: {message}", error_class=f"output-{reason}")
        if reason == "over-limit":
            return
    cls = validator_for(schema, default=validator_for({}))
    errors = sorted(cls(cls.META_SCHEMA).iter_errors(schema), key=lambda e: list(e.absolute_path))
    if errors:
        first = errors[0]
        yield Problem(
            f"the outputSchema is not a valid schema at {pointer(list(first.absolute_path)) or '/'}: {first.message[:160]}",
            error_class="output-meta-schema",
        )


def _described(node: dict[str, Any]) -> bool:
    return isinstance(node.get("description"), str) and bool(node["description"].strip())


@register("descriptions", applies_to=("catalog",), severity="warning", reference="MCP 2025-11-25 server/tools (Tool: description, a hint to the model); common practice")
def descriptions(ctx: CallContext) -> Iterator[Problem]:
    """Every tool and every parameter (properties of the inputSchema) has a non-empty description."""
    tool = ctx.tool
    if tool is None:
        return
    if not (isinstance(tool.description, str) and tool.description.strip()):
        yield Problem("the tool has no description (a model chooses tools by their descriptions)", error_class="tool")
    missing = []
    for where, node in schema_places(tool.input_schema):
        props = node.get("properties")
        if isinstance(props, dict):
            missing += [f"{where}/properties/{name}" for name, sub in props.items() if isinstance(sub, dict) and not _described(sub) and "$ref" not in sub]
    if missing:
        shown = ", ".join(missing[:6]) + (f" (+{len(missing) - 6} more)" if len(missing) > 6 else "")
        yield Problem(f"{len(missing)} parameter(s) without a description: {shown}", error_class="parameters")


@register("annotations_agree", applies_to=("catalog",), reference="MCP 2025-11-25 server/tools (ToolAnnotations: destructiveHint is meaningful only when readOnlyHint is false)")
def annotations_agree(ctx: CallContext) -> Iterator[Problem]:
    """Tool annotations do not contradict each other (read-only and destructive at once)."""
    tool = ctx.tool
    if tool is None:
        return
    hints = tool.annotations
    if hints.get("readOnlyHint") is True and hints.get("destructiveHint") is True:
        yield Problem("annotated both readOnlyHint: true and destructiveHint: true; a client cannot tell whether "
                      "calling it is safe", error_class="read-only-destructive")
    for key in ("readOnlyHint", "destructiveHint", "idempotentHint", "openWorldHint"):
        if key in hints and not isinstance(hints[key], bool):
            yield Problem(f"annotation {key} is {hints[key]!r}, not a boolean", error_class=f"type:{key}")


@register("tool_names_unique", applies_to=("catalog",), reference="MCP 2025-11-25 server/tools (tool names SHOULD be unique within a server)")
def tool_names_unique(ctx: CallContext) -> Iterator[Problem]:
    """No two tools share a name (clients call tools by name), nor differ only in letter case."""
    if ctx.tool is not None or ctx.catalog is None:
        return
    seen: dict[str, list[str]] = {}
    for raw in ctx.catalog.tools:
        name = str(raw.get("name")) if isinstance(raw, dict) else str(raw)
        seen.setdefault(name.lower(), []).append(name)
    for names in seen.values():
        if len(names) > 1:
            what = "the same name" if len(set(names)) == 1 else "names that differ only in letter case"
            yield Problem(f"{len(names)} tools have {what}: {sorted(set(names))}", error_class="duplicate", tools=tuple(sorted(set(names))))


def estimate_tokens(tools: list[Any]) -> int:
    """Rough token count of the tool list as a model reads it: compact JSON over 4 characters a token
    (common practice for English text and JSON; an estimate, not a tokenizer)."""
    return len(json.dumps(tools, separators=(",", ":"), ensure_ascii=False)) // 4


@register("catalog_size", applies_to=("catalog",), severity="warning", reference="common practice: models choose tools worse from long catalogs")
def catalog_size(ctx: CallContext) -> Iterator[Problem]:
    """The catalog stays within ``max_tools`` tools and ``max_catalog_tokens`` estimated tokens."""
    if ctx.tool is not None or ctx.catalog is None:
        return
    count, tokens = len(ctx.catalog.tools), estimate_tokens(ctx.catalog.tools)
    if count > ctx.settings.max_tools:
        yield Problem(f"{count} tools, more than max_tools = {ctx.settings.max_tools}", error_class="tools")
    if tokens > ctx.settings.max_catalog_tokens:
        yield Problem(f"the tool list is about {tokens} tokens, more than max_catalog_tokens = "
                      f"{ctx.settings.max_catalog_tokens}", error_class="tokens")


_WORDS = re.compile(r"\W+")
#: Descriptions this similar (difflib ratio) read as the same tool to a model (tuned on our corpus,
#: ``tests/check/corpus/descriptions.json``).
NEAR_DUPLICATE = 0.9
_NAME_PARTS = re.compile(r"[A-Z]?[a-z]+|[A-Z]+(?![a-z])|\d+")


def _name_words(name: str) -> set[str]:
    """The words of a tool name (``fuel_price_north``, ``getTideLevel`` -> fuel, price, north / get, tide, level)."""
    return {w.lower() for w in _NAME_PARTS.findall(name)}


def _distinguished(name_a: str, words_a: list[str], name_b: str, words_b: list[str]) -> bool:
    """The descriptions differ in a number or an identifier (a token with a digit or ``_``), or in a word that
    also tells the tool names apart (``weather_north`` / ``weather_south``): the author put the distinction
    where a model reads it, so the pair is a family of tools, not two tools a model cannot tell apart."""
    differing: set[str] = set()
    for tag, i1, i2, j1, j2 in SequenceMatcher(None, words_a, words_b, autojunk=False).get_opcodes():
        if tag != "equal":
            differing.update(words_a[i1:i2] + words_b[j1:j2])
    if any(any(c.isdigit() for c in w) or "_" in w for w in differing):
        return True
    return bool(differing & (_name_words(name_a) ^ _name_words(name_b)))


def near_duplicate_groups(tools: list[tuple[str, str]]) -> list[tuple[list[str], float]]:
    """Groups of tools (by name) whose descriptions a model cannot tell apart, with the lowest similarity
    inside the group: pairs at least :data:`NEAR_DUPLICATE` similar and not :func:`_distinguished`, joined
    when they share a tool. *tools* is ``(name, description)``; texts under 20 characters are left out."""
    texts = []
    for name, description in tools:
        text = _WORDS.sub(" ", description or "").strip().lower()
        if len(text) >= 20:
            texts.append((name, text, text.split()))
    parent = {name: name for name, _, _ in texts}
    lowest: dict[str, float] = {}

    def root(name: str) -> str:
        while parent[name] != name:
            parent[name] = parent[parent[name]]
            name = parent[name]
        return name

    for i, (name_a, a, words_a) in enumerate(texts):
        for name_b, b, words_b in texts[i + 1:]:
            matcher = SequenceMatcher(None, a, b, autojunk=False)
            if not (matcher.real_quick_ratio() >= NEAR_DUPLICATE and matcher.quick_ratio() >= NEAR_DUPLICATE):
                continue
            ratio = matcher.ratio()
            if ratio < NEAR_DUPLICATE or _distinguished(name_a, words_a, name_b, words_b):
                continue
            ra, rb = root(name_a), root(name_b)
            parent[rb] = ra
            lowest[ra] = min(ratio, lowest.get(ra, 1.0), lowest.pop(rb, 1.0))
    groups: dict[str, list[str]] = {}
    for name, _, _ in texts:
        groups.setdefault(root(name), []).append(name)
    return sorted((sorted(set(names)), lowest[key]) for key, names in groups.items() if len(set(names)) > 1 and key in lowest)


@register("distinct_descriptions", applies_to=("catalog",), severity="warning", reference="common practice: a model tells tools apart by their descriptions")
def distinct_descriptions(ctx: CallContext) -> Iterator[Problem]:
    """No two tools have the same or nearly the same description (one finding per group of such tools;
    descriptions that differ in a number, an identifier or a word of the tools' names are a family, not
    near-duplicates)."""
    if ctx.tool is not None or ctx.catalog is None:
        return
    tools = [(str(raw.get("name")), str(raw.get("description") or "")) for raw in ctx.catalog.tools[:300] if isinstance(raw, dict)]
    for names, similarity in near_duplicate_groups(tools):  # bounded: pairs of at most 300 tools
        shown = ", ".join(repr(n) for n in names)
        yield Problem(f"{len(names)} tools have near-identical descriptions (similarity {similarity:.2f} at the lowest): "
                      f"{shown}; a model cannot tell them apart", error_class=f"near-duplicate:{names[0]}", tools=tuple(names))
