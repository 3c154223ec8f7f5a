"""Keyword coverage: which keywords of a schema (by location) got a go and a no-go case, and why not.

Go credit comes from walking each go case through the schema (every keyword at a reached node was
exercised by a value the schema accepts); no-go credit from each no-go case's ``schema_path``, and
for applicators (``properties``, ``items``, ``allOf``, ``$ref``...) from any no-go case below them.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any

from feeler._limits import MAX_COUNT, UPPER_COUNTS, over_count
from feeler.generate._model import ANNOTATIONS, compile_schema
from feeler.generate._schema import SCHEMA_KEYWORDS, SCHEMA_LIST_KEYWORDS, SCHEMA_MAP_KEYWORDS, ToolSchema, pointer, subschemas
from feeler.generate._walk import sites
from feeler.generate.cases import Case
from feeler.generate.mutators import MUTATORS

__all__ = ["KeywordCoverage", "coverage"]

APPLICATORS = frozenset({*SCHEMA_KEYWORDS, *SCHEMA_LIST_KEYWORDS, *SCHEMA_MAP_KEYWORDS, "items", "dependencies", "$ref"}) - ANNOTATIONS
_ALL_TYPES = {"null", "boolean", "integer", "number", "string", "array", "object"}


#: Why keywords below these applicators get no no-go case of their own (JSON Schema 2020-12 core 10.2-10.3).
INSIDE = {
    "not": "inside not: breaking this keyword makes the value valid (core 10.2.1.4)",
    "if": "inside if: if only selects then/else and never fails (core 10.2.2.1)",
    "contains": "inside contains: an item failing it is only not counted; contains itself fails (core 10.3.1.3)",
}


@dataclass(frozen=True)
class KeywordCoverage:
    """Coverage of one keyword at one schema location.

    :param schema_path: the JSON Pointer of the schema node holding the keyword (``""`` = root).
    :param reason: why no no-go case exists, when none does.
    """

    schema_path: str
    keyword: str
    go: int
    nogo: int
    reason: str | None = None


def _inventory(ts: ToolSchema) -> list[tuple[str, str, Any, Any]]:
    out: list[tuple[str, str, Any, Any]] = []

    def visit(node: Any, at: tuple[Any, ...]) -> None:
        if isinstance(node, dict):
            constraining = [k for k in node if k not in ANNOTATIONS]
            if not constraining:
                out.append((pointer(at), "{}", node, None))
            for key in constraining:
                out.append((pointer(at), key, node, node[key]))
        for rel, sub in subschemas(node):
            visit(sub, at + rel)

    visit(ts.schema, ())
    return out


def _why(ts: ToolSchema, at: str, keyword: str, node: Any, value: Any, reached: bool) -> str:
    if keyword == "{}":
        return "the empty schema accepts every value: nothing to violate"
    inside = next((k for k in ("not", "if", "contains") if f"/{k}/" in at + "/"), None)
    if inside:
        return INSIDE[inside]
    if not reached:
        return "no go case reaches this location, so no one-keyword violation could be built there"
    if keyword == "type" and at == "" and value in ("object", ["object"]):
        return "arguments must be a JSON object on the wire; other types are sent as protocol probes"
    if keyword == "type" and set([value] if isinstance(value, str) else value) >= _ALL_TYPES - {"integer"}:
        return "every JSON type is allowed"
    if keyword in UPPER_COUNTS and over_count(value):
        return f"{keyword} {value:g} is over feeler's limit of {MAX_COUNT:,}: no value that large is built (tool arguments are small)"
    if keyword in ("minLength", "minItems", "minProperties", "minContains") and value == 0:
        return f"{keyword} 0 is met by every value"
    if keyword == "uniqueItems" and value is False:
        return "uniqueItems false constrains nothing"
    if keyword in ("additionalProperties", "unevaluatedProperties", "items", "additionalItems") and value in (True, {}):
        return f"{keyword} allows everything"
    if keyword == "required" and not value:
        return "no property is required"
    if keyword in ("if",):
        return "if only selects then/else; see those"
    if keyword in APPLICATORS:
        return "no no-go case was proven below this applicator"
    if keyword not in MUTATORS:
        return f"feeler has no mutator for {keyword!r} yet"
    return "no candidate was proven invalid by jsonschema (each near miss was refuted)"


def coverage(schema: Any, cases: Iterable[Case]) -> list[KeywordCoverage]:
    """Keyword coverage of *cases* over *schema*, one entry per keyword and schema location.

    :param schema: a JSON Schema or a :class:`~feeler.generate.ToolSchema`.
    :param cases: go and no-go cases (from :func:`go_cases`, :func:`nogo_cases`, or hand-written).
    """
    ts = compile_schema(schema)
    go: dict[tuple[str, str], int] = {}
    nogo: dict[tuple[str, str], int] = {}
    reached: set[str] = set()
    nogo_paths: list[str] = []
    for case in cases:
        if case.kind == "go":
            for site in sites(ts, case.arguments):
                reached.add(site.pointer)
                for keyword in site.kw:
                    go[(site.pointer, keyword)] = go.get((site.pointer, keyword), 0) + 1
        else:
            node_at, _, keyword = case.schema_path.rpartition("/")
            nogo[(node_at, keyword)] = nogo.get((node_at, keyword), 0) + 1
            nogo_paths.append(case.schema_path)
    out = []
    inventory = _inventory(ts)
    # Each reference's place and its target: a no-go case in the target counts for every applicator above the $ref.
    refs = [(f"{at}/$ref", ts.resolve(value, ts.resolver_for(node))[1]) for at, keyword, node, value in inventory
            if keyword == "$ref" and isinstance(value, str)]  # fmt: skip

    def below(prefix: str) -> int:
        count = sum(1 for p in nogo_paths if p.startswith(prefix))
        for ref, target in refs:
            if ref.startswith(prefix):
                count += sum(1 for p in nogo_paths if p.startswith(target + "/"))
        return count

    for at, keyword, node, value in inventory:
        n_go = go.get((at, keyword), 0)
        n_nogo = nogo.get((at, keyword), 0)
        if keyword in APPLICATORS and not n_nogo:
            if keyword == "$ref":
                target = ts.resolve(value, ts.resolver_for(node))[1]
                n_nogo = sum(1 for p in nogo_paths if p.startswith(target + "/"))
            elif keyword == "if":
                n_nogo = below(f"{at}/then/") + below(f"{at}/else/")
            else:
                n_nogo = below(f"{at}/{keyword}/")
        if keyword == "{}":
            n_go = 1 if at in reached else 0
        reason = None if n_nogo else _why(ts, at, keyword, node, value, at in reached)
        out.append(KeywordCoverage(at, keyword, n_go, n_nogo, reason))
    return out
