"""Every keyword of our own corpus (tests/generate/keyword_corpus.py) at every place is held to the oracle.

For each schema: every go case is valid and every no-go case invalid with its keyword at its instance
path (``jsonschema``, patterns read by an ECMA-262 engine, formats checked: gen_reference.py), and every
constraint keyword at every place of the schema, inside ``anyOf``/``oneOf`` branches, ``then``/``else``,
``$ref`` targets and unevaluated subschemas included, is broken by at least one no-go case. The places
are listed (run with ``-s`` to see them). The only places not required are those no value can break
alone, each for a reason from the specification, in :data:`EXCUSED`.

References: JSON Schema 2020-12 Core (sections 8-11) and Validation (sections 6-7), draft-07 and
2019-09 for the older spellings; ``jsonschema`` as the oracle; MCP 2025-11-25 server/tools (arguments
are a JSON object).
"""

from __future__ import annotations

from typing import Any

import pytest
import referencing
import referencing.jsonschema

from feeler.generate import ToolSchema, go_cases, nogo_cases
from gen_reference import nogo_is_proven, reference_validator
from keyword_corpus import CORPUS, Entry

#: Keywords that constrain nothing by themselves (core 8, validation 9) or only hold definitions.
NOT_CONSTRAINTS = {"$schema", "$id", "$anchor", "$dynamicAnchor", "$defs", "definitions", "$comment", "title",
                   "description", "default", "examples", "deprecated", "readOnly", "writeOnly"}  # fmt: skip
#: Keywords whose value is a subschema, a list of them, or a map of them (the walk of the places).
ONE = ("additionalProperties", "unevaluatedProperties", "additionalItems", "unevaluatedItems", "contains",
       "propertyNames", "not", "if", "then", "else", "items")  # fmt: skip
MANY = ("allOf", "anyOf", "oneOf", "prefixItems", "items")
MAP = ("properties", "patternProperties", "$defs", "definitions", "dependentSchemas", "dependencies")
#: Places no no-go case can break by themselves, with the reason (the specification's).
EXCUSED = {
    "if": "if only chooses then or else; a value failing it is valid (core 10.2.2.1)",
    "not": "breaking a keyword inside not makes the value valid (core 10.2.1.4)",
    "contains": "an item failing the contains subschema is only not counted; the failure is contains itself (core 10.3.1.3)",
    "root type": "arguments are a JSON object on the wire (MCP 2025-11-25 server/tools); other types are protocol probes",
}


def _escape(part: Any) -> str:
    return str(part).replace("~", "~0").replace("/", "~1")


def places(schema: Any) -> list[tuple[str, str, str | None]]:
    """``(node pointer, keyword, excuse or None)`` for every constraint keyword in *schema*."""
    out: list[tuple[str, str, str | None]] = []

    def visit(node: Any, at: str, excuse: str | None) -> None:
        if not isinstance(node, dict):
            return
        for keyword in node:
            if keyword in NOT_CONSTRAINTS:
                continue
            why = excuse or (EXCUSED["if"] if keyword == "if" else None)
            if keyword == "type" and at == "" and node[keyword] == "object":
                why = EXCUSED["root type"]
            out.append((at, keyword, why))
        for keyword in ONE:
            if isinstance(node.get(keyword), dict):
                inner = EXCUSED.get(keyword) if keyword in ("if", "not", "contains") else None
                visit(node[keyword], f"{at}/{keyword}", excuse or inner)
        for keyword in MANY:
            if isinstance(node.get(keyword), list):
                for i, sub in enumerate(node[keyword]):
                    visit(sub, f"{at}/{keyword}/{i}", excuse)
        for keyword in MAP:
            if isinstance(node.get(keyword), dict):
                for name, sub in node[keyword].items():
                    visit(sub, f"{at}/{keyword}/{_escape(name)}", excuse)

    visit(schema, "", None)
    return out


def _targets(schema: Any) -> dict[str, str]:
    """``pointer of a $ref keyword -> pointer of its target``, resolved with ``referencing``."""
    spec = referencing.jsonschema.specification_with(schema.get("$schema", "https://json-schema.org/draft/2020-12/schema"))
    root = spec.create_resource(schema)
    registry = referencing.Registry().with_resource(root.id() or "", root).crawl()
    where: dict[int, str] = {}

    def index(node: Any, at: str) -> None:
        if isinstance(node, dict):
            where[id(node)] = at
            for key, value in node.items():
                index(value, f"{at}/{_escape(key)}")
        elif isinstance(node, list):
            for i, value in enumerate(node):
                index(value, f"{at}/{i}")

    index(schema, "")
    out: dict[str, str] = {}

    def visit(node: Any, at: str, resolver: Any) -> None:
        if isinstance(node, dict):
            if isinstance(node.get("$id"), str) and at:
                resolver = resolver.in_subresource(spec.create_resource(node))
            if isinstance(node.get("$ref"), str):
                out[f"{at}/$ref"] = where[id(resolver.lookup(node["$ref"]).contents)]
            for key, value in node.items():
                if key not in ("enum", "const", "default", "examples"):
                    visit(value, f"{at}/{_escape(key)}", resolver)
        elif isinstance(node, list):
            for i, value in enumerate(node):
                visit(value, f"{at}/{i}", resolver)

    visit(schema, "", registry.resolver(root.id() or ""))
    return out


def broken(at: str, keyword: str, nogo_locations: list[str], targets: dict[str, str]) -> int:
    """How many no-go cases break *keyword* at *at*: the keyword itself, or (an applicator) a keyword below
    it, following each ``$ref`` below it to its target."""
    here = f"{at}/{keyword}"
    count = sum(1 for loc in nogo_locations if loc == here or loc.startswith(here + "/"))
    for ref, target in targets.items():
        if ref == here or ref.startswith(here + "/"):
            count += sum(1 for loc in nogo_locations if loc.startswith(target + "/"))
    return count


@pytest.mark.parametrize("entry", CORPUS, ids=[e.name for e in CORPUS])
def test_every_keyword_at_every_place(entry: Entry) -> None:
    schema = entry.schema
    oracle = reference_validator(schema)
    ts = ToolSchema(schema)
    go, nogo = go_cases(ts, draws=10, seed=3), nogo_cases(ts)
    for case in go:
        # jsonschema (JSON Schema 2020-12 / draft-07 / 2019-09 as declared): every go case is valid.
        assert oracle.is_valid(case.arguments), (case, [e.message for e in oracle.iter_errors(case.arguments)])
    for case in nogo:
        # jsonschema: invalid, with the case's keyword at the case's instance path (error tree included).
        assert not oracle.is_valid(case.arguments), case
        assert nogo_is_proven(oracle, schema, case), case
    locations = [c.schema_path for c in nogo]
    targets = _targets(schema)
    missing = []
    print(f"\n{entry.name} ({entry.sections}): {len(go)} go, {len(nogo)} no-go")
    for at, keyword, excuse in places(schema):
        count = broken(at, keyword, locations, targets)
        status = f"{count} no-go" if count else f"excused: {excuse}" if excuse else "NOT BROKEN"
        print(f"  {(at or '') + '/' + keyword:<58} {status}")
        if not count and not excuse:
            missing.append(f"{at}/{keyword}")
    assert not missing, f"{entry.name}: no no-go case breaks {missing}"


def test_the_corpus_names_every_keyword() -> None:
    # Every 2020-12 keyword that constrains or applies, and the draft-07 / 2019-09 spellings, appear.
    wanted = {
        "type", "enum", "const", "multipleOf", "maximum", "exclusiveMaximum", "minimum", "exclusiveMinimum",
        "maxLength", "minLength", "pattern", "format", "maxItems", "minItems", "uniqueItems", "maxContains",
        "minContains", "maxProperties", "minProperties", "required", "dependentRequired", "allOf", "anyOf", "oneOf",
        "not", "if", "then", "else", "dependentSchemas", "prefixItems", "items", "contains", "properties",
        "patternProperties", "additionalProperties", "propertyNames", "unevaluatedItems", "unevaluatedProperties",
        "$ref", "$defs", "$id", "$anchor", "additionalItems", "dependencies", "definitions",
    }  # fmt: skip
    seen: set[str] = set()

    def visit(node: Any) -> None:
        if isinstance(node, dict):
            seen.update(node)
            for key, value in node.items():
                if key not in ("enum", "const"):
                    visit(value)
        elif isinstance(node, list):
            for value in node:
                visit(value)

    for entry in CORPUS:
        visit(entry.schema)
    assert wanted <= seen, wanted - seen
