"""Go and no-go cases for one input schema, each proven by the oracle before it is returned.

The runner here is the only place cases are made: it builds a valid base instance, walks it with the
schema (:mod:`._walk`), asks the :data:`~feeler.generate.boundaries.BOUNDARIES` and
:data:`~feeler.generate.mutators.MUTATORS` tables for candidate values at each site, and keeps a
candidate only if ``jsonschema`` agrees: go cases validate, and a no-go case fails with an error of
the named keyword at the named instance path (``error.validator`` and ``error.absolute_path``) and at
the schema location the mutator aimed at (``error.absolute_schema_path``). Refuted candidates are
dropped and counted in :class:`Tally`.
"""

from __future__ import annotations

import random
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any

from hypothesis import strategies as st

from feeler._json import canonical_dumps, json_path, to_pointer
from feeler.errors import SchemaProblem
from feeler.generate._build import Unbuildable, build, example
from feeler.generate._fast import fast_values
from feeler.generate._schema import ToolSchema, compile_schema
from feeler.generate._strategies import draws, strategy_for
from feeler.generate._walk import Site, sites
from feeler.generate.boundaries import BOUNDARIES
from feeler.generate.mutators import MUTATORS

__all__ = ["Case", "Tally", "arguments", "base_instances", "drawn_cases", "fast_go_cases", "go_cases", "nogo_cases"]


@dataclass(frozen=True)
class Case:
    """One set of arguments for a tool, and what it exercises.

    :param kind: ``"go"`` (the schema accepts it) or ``"no-go"`` (it breaks exactly the named keyword).
    :param keyword: the keyword exercised (go) or violated (no-go); ``None`` for plain drawn go cases.
    :param path: where in the arguments, as ``$.a[0].b``.
    :param schema_path: the keyword's location in the schema document, a JSON Pointer (``/properties/a/minimum``).
    :param arguments: the whole arguments value.
    :param error: the oracle's message for a no-go case; ``None`` for go cases.
    :param source: where the values came from: ``"schema"`` (boundaries, ``default``/``examples``/``const``,
        and the one broken keyword of a no-go case), ``"known"`` (given by the user), ``"learned"`` (from
        answers), ``"chain"`` (an earlier call in a sequence) or ``"sampled"`` (the random sampler).
    :param note: a short human description (``"minimum 3"``, ``"smallest object: ..."``).
    """

    kind: str
    keyword: str | None
    path: str
    schema_path: str
    arguments: Any
    error: str | None = None
    source: str = "schema"
    note: str = ""

    @property
    def keyword_location(self) -> str:
        """The keyword's location in the schema, a JSON Pointer (``""`` for a sampled case)."""
        return self.schema_path

    @property
    def instance_location(self) -> str:
        """Where in the arguments, a JSON Pointer (``""`` for the root)."""
        return to_pointer(self.path) or ""

    @property
    def is_boundary(self) -> bool:
        """A go case that sits exactly on a bound the schema names (``minimum``, ``maxLength``...)."""
        from feeler.generate.boundaries import BOUND_KEYWORDS

        return self.kind == "go" and self.source == "schema" and self.keyword in BOUND_KEYWORDS

    def as_json(self) -> dict[str, Any]:
        """The case as a JSON object (the line format of ``feeler cases``)."""
        return {
            "kind": self.kind,
            "keyword": self.keyword,
            "keywordLocation": self.keyword_location,
            "instanceLocation": self.instance_location,
            "source": self.source,
            "note": self.note,
            "error": self.error,
            "arguments": self.arguments,
        }


@dataclass
class Tally:
    """What the oracle refused: candidates that turned out valid (no-go) or invalid (go)."""

    refuted_go: int = 0
    refuted_nogo: int = 0
    notes: dict[tuple[str, str], str] = field(default_factory=dict)


def _filled(ts: ToolSchema, value: Any, rounds: int = 3) -> Any:
    """*value* with every optional property and one item per empty array added where the oracle allows.

    Used when the fullest value by construction is invalid (``oneOf`` over optional properties,
    ``maxProperties``, ``not``...): each addition is kept only if the whole instance stays valid.
    """
    for _ in range(rounds):
        changed = False
        for site in list(sites(ts, value)):
            if isinstance(site.value, dict) and not site.key_mode:
                for name, sub in (site.node.get("properties") or {}).items():
                    if name in site.value:
                        continue
                    try:
                        trial = site.put({**site.value, name: example(ts, sub, full=True)})
                    except Unbuildable:
                        continue
                    if ts.is_valid(trial):
                        value, changed = trial, True
                        break
            elif isinstance(site.value, list) and not site.value and isinstance(site.node.get("items"), dict):
                try:
                    trial = site.put([example(ts, site.node["items"], full=True)])
                except Unbuildable:
                    continue
                if ts.is_valid(trial):
                    value, changed = trial, True
            if changed:
                break
        if not changed:
            break
    return value


def base_instances(ts: ToolSchema) -> list[Any]:
    """The fullest and the smallest valid instance (one if they coincide), oracle-checked.

    :raises SchemaProblem: ``unsatisfiable`` when neither construction nor search finds a valid value.
    """
    out: list[Any] = []
    found = []
    try:
        # The fullest by construction only: a searched value would not be "fullest" anyway.
        value = build(ts, ts.schema, full=True)
        if ts.is_valid(value):
            found.append((True, value))
    except Unbuildable:
        pass
    try:
        found.append((False, example(ts, ts.schema)))
    except Unbuildable:
        pass
    if found and not found[0][0]:
        # The fullest by construction was refused: grow the smallest one addition at a time instead.
        found.insert(0, (True, _filled(ts, found[0][1], rounds=32)))
    for _, value in found:
        if all(canonical_dumps(value) != canonical_dumps(v) for v in out):
            out.append(value)
    if not out:
        where = f"tool {ts.name!r}: " if ts.name else ""
        raise SchemaProblem(
            f"{where}feeler found no value this schema accepts (it may be unsatisfiable); no go case can be made",
            reason="unsatisfiable",
        )
    return out


def _sites(ts: ToolSchema, bases: list[Any]) -> Iterator[Site]:
    # A location already reached through the fullest base is not revisited through the smallest:
    # the second base only adds what the first missed (an else branch, an absent optional part).
    done: set[tuple[Any, ...]] = set()
    for base in bases:
        for site in sites(ts, base):
            key = (site.vpath, site.pointer, site.path, site.key_mode)
            if key not in done:
                done.add(key)
                yield site


def go_cases(schema: Any, *, draws: int = 0, seed: int = 0, tally: Tally | None = None) -> list[Case]:
    """Explicit boundary go cases for *schema* (each bound hit exactly), then *draws* drawn go cases.

    :param schema: a JSON Schema or a :class:`ToolSchema`.
    :param draws: how many drawn go cases to add (:func:`fast_go_cases`; ``source="sampled"``, ``keyword=None``).
    :param seed: the seed for the drawn cases; boundary cases do not depend on it.
    :param tally: filled with the number of candidates the oracle refused.
    :raises SchemaProblem: the schema cannot be used (see :class:`ToolSchema`).
    """
    ts = compile_schema(schema)
    tally = tally if tally is not None else Tally()
    out: list[Case] = []
    seen: set[tuple[str, str, str]] = set()
    bases = base_instances(ts)
    for site in _sites(ts, bases):
        for keyword, spec in site.node.items():
            producer = BOUNDARIES.get(keyword)
            if producer is None:
                continue
            try:
                candidates = list(producer(ts, site, spec))
            except Unbuildable:
                continue
            for note, value in candidates:
                if site.key_mode and not isinstance(value, str):
                    continue
                arguments = site.put(value)
                key = (keyword, site.pointer, canonical_dumps(arguments))
                if key in seen:
                    continue
                seen.add(key)
                if not ts.is_valid(arguments):
                    tally.refuted_go += 1
                    continue
                out.append(Case("go", keyword, json_path(site.path), f"{site.pointer}/{keyword}", arguments, None, "schema", note))
    out.extend(drawn_cases(ts, draws, seed=seed))
    return out


def drawn_cases(schema: Any, count: int, *, seed: int = 0) -> list[Case]:
    """*count* drawn go cases under *seed* (deterministic), ``source="sampled"``; see :func:`fast_go_cases`."""
    return fast_go_cases(schema, count, seed=seed)


def fast_go_cases(schema: Any, count: int, *, seed: int = 0) -> list[Case]:
    """*count* go cases built by a seeded sampler outside hypothesis' engine, each checked by the oracle.

    The schema is compiled once into one sampler per node (:mod:`._fast`); values come from
    ``random.Random(seed)``, so the same seed gives the same cases. If the sampler cannot fill
    *count* (a node it cannot build and a pool hypothesis could not fill), the rest is drawn from
    :func:`arguments` under the same seed. For shrinking and the example database use
    :func:`arguments` in a ``@given`` test instead.

    :raises SchemaProblem: the schema cannot be used (see :class:`ToolSchema`), or no valid value was
        found (``unsatisfiable``).
    """
    ts = compile_schema(schema)
    if count <= 0:
        return []
    values, _ = fast_values(ts, count, random.Random(seed))
    if len(values) < count:
        try:
            values += draws(arguments(ts), count - len(values), seed=seed)
        except Exception:  # noqa: BLE001 - hypothesis gave up too (filter, unsatisfiable node); use what we have
            pass
    if not values:
        where = f"tool {ts.name!r}: " if ts.name else ""
        raise SchemaProblem(
            f"{where}feeler found no value this schema accepts (it may be unsatisfiable); no go case can be made",
            reason="unsatisfiable",
        )
    # Short of *count* only when both samplers struggled: repeat the values found, in order.
    values = [values[i % len(values)] for i in range(count)]
    # source "sampled" names the sampled (non-boundary) go cases, whichever sampler made them.
    return [Case("go", None, "$", "", value, None, "sampled", "sampled") for value in values]


def nogo_cases(
    schema: Any, *, root_type: bool = False, per_keyword: int = 3, tally: Tally | None = None, bases: list[Any] | None = None
) -> list[Case]:
    """No-go cases for *schema*: one keyword violated at a time, at any depth, each proven by the oracle.

    :param bases: valid arguments to break, in order (e.g. go cases the server accepted); each place is
        broken in the first base that reaches it. Invalid ones are skipped; the fullest and smallest
        instances are used when none is left (the default).
    :param root_type: also make arguments that are not an object at all (``$`` of another type).
        Off by default: MCP requires ``arguments`` to be an object, so those are protocol probes
        (:func:`feeler.generate.protocol_probes`), not argument cases.
    :param per_keyword: at most this many cases per keyword and location (``type``: one per excluded type).
    :param tally: filled with the number of candidates the oracle refused.
    :raises SchemaProblem: the schema cannot be used (see :class:`ToolSchema`).
    """
    ts = compile_schema(schema)
    tally = tally if tally is not None else Tally()
    out: list[Case] = []
    seen: set[str] = set()
    chosen = [b for b in bases or [] if ts.is_valid(b)]
    for site in _sites(ts, chosen or base_instances(ts)):
        for keyword, spec in site.node.items():
            mutator = MUTATORS.get(keyword)
            if mutator is None or (keyword == "type" and site.path == () and not root_type and not site.key_mode):
                continue
            proven: list[tuple[int, Case]] = []
            try:
                candidates = list(mutator(ts, site, spec))
            except Unbuildable:
                continue
            for value in candidates:
                if site.key_mode and not isinstance(value, str):
                    continue
                arguments = site.put(value)
                key = canonical_dumps([keyword, site.pointer, arguments])
                if key in seen:
                    continue
                seen.add(key)
                case, count = _prove(ts, site, keyword, arguments)
                if case is None:
                    tally.refuted_nogo += 1
                else:
                    proven.append((count, case))
            limit = len(proven) if keyword == "type" else per_keyword
            # Cases that break only the named keyword first: "the rest of the instance kept valid".
            proven.sort(key=lambda pair: pair[0])
            out.extend(case for _, case in proven[:limit])
    return out


def _prove(ts: ToolSchema, site: Site, keyword: str, arguments: Any) -> tuple[Case | None, int]:
    errors = ts.errors(arguments)
    want_schema_path = (*site.vpath, keyword)
    for error in errors:
        if (
            error.validator == keyword
            and tuple(error.absolute_path) == site.path
            and tuple(error.absolute_schema_path) == want_schema_path
        ):
            return (
                Case("no-go", keyword, json_path(site.path), f"{site.pointer}/{keyword}", arguments, error.message, "schema"),
                len(errors),
            )
    return None, len(errors)


def arguments(schema: Any) -> st.SearchStrategy[Any]:
    """A hypothesis strategy of arguments *schema* accepts; every value passes the oracle.

    Built by construction for common shapes (so it is fast and shrinks towards the smallest object),
    with hypothesis-jsonschema as the fallback for nodes it does not handle. Works with hypothesis'
    example database and shrinking like any strategy.

    :raises SchemaProblem: the schema cannot be used (see :class:`ToolSchema`).
    """
    ts = compile_schema(schema)
    return strategy_for(ts, ts.schema).filter(ts.is_valid)
