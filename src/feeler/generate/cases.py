"""Go and no-go cases for one input schema, each proven by the oracle before it is returned (sampled go
cases of a schema whose shape is exact are valid by construction and audited: :func:`fast_go_cases`).

The runner here is the only place cases are made: it builds valid base instances (the fullest, the
smallest, and one through each ``if`` outcome and each ``anyOf``/``oneOf`` branch), walks them with the
compiled schema (:mod:`._walk`), asks the :data:`~feeler.generate.boundaries.BOUNDARIES` and
:data:`~feeler.generate.mutators.MUTATORS` tables for candidate values at each site, and keeps a
candidate only if ``jsonschema`` agrees: go cases validate, and a no-go case fails with an error of
the named keyword at the named instance path (``error.validator`` and ``error.absolute_path``) and at
the schema location the mutator aimed at (``error.absolute_schema_path``), looked for in the whole
error tree (inside an ``anyOf``/``oneOf`` branch the error sits in the combinator's ``context``, which
``jsonschema`` fills only when no branch accepts the value). Refuted candidates are dropped and
counted in :class:`Tally`.
"""

from __future__ import annotations

import copy
import functools
import random
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from typing import Any

from hypothesis import strategies as st

from jsonschema.exceptions import ValidationError

from feeler._json import canonical_dumps, json_path, to_pointer
from feeler._limits import UPPER_COUNTS, over_count
from feeler.errors import SchemaProblem
from feeler.generate._arguments import arguments_strategy
from feeler.generate._build import Unbuildable, build, example, find_value
from feeler.generate._ecma import SlowPattern
from feeler.generate._fast import fast_values
from feeler.generate._model import compile_schema, model_of
from feeler.generate._schema import ToolSchema
from feeler.generate._strategies import draws
from feeler.generate._walk import Site, sites
from feeler.generate.boundaries import BOUND_KEYWORDS, BOUNDARIES
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
        # source "known"/"learned": a boundary case with world values put in elsewhere (feeler.world.apply)
        return self.kind == "go" and self.source != "sampled" and self.keyword in BOUND_KEYWORDS

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
    model = model_of(ts)
    for _ in range(rounds):
        changed = False
        for site in list(sites(ts, value)):
            shape = model.shape_of(site.node)
            if isinstance(site.value, dict) and not site.key_mode:
                for name in site.kw.get("properties") or {}:
                    if name in site.value:
                        continue
                    try:
                        trial = site.put({**site.value, name: example(shape.for_key(name), full=True)})
                    except Unbuildable:
                        continue
                    if ts.is_valid(trial):
                        value, changed = trial, True
                        break
            elif isinstance(site.value, list) and not site.value and "items" in site.kw:
                try:
                    trial = site.put([example(shape.item(0), full=True)])
                except Unbuildable:
                    continue
                if ts.is_valid(trial):
                    value, changed = trial, True
            if changed:
                break
        if not changed:
            break
    return value


#: Most base instances made for branches and conditional outcomes (besides the fullest and smallest).
_BRANCH_BASES = 24


Route = tuple[Site, str, Any, tuple[Any, ...]]


def _routes(ts: ToolSchema, instance: Any) -> list[Route]:
    """``(site, route, node, peers)`` for each ``anyOf``/``oneOf`` branch, ``if`` outcome and declared
    property at a site *instance* reaches; ``route`` names it (``/anyOf/1``, ``/if/else``,
    ``/properties/name``); ``peers`` are all the nodes that apply at the site's instance location."""
    walked = [s for s in sites(ts, instance) if not s.key_mode]
    at_path: dict[tuple[Any, ...], list[Site]] = {}
    for site in walked:
        at_path.setdefault(site.path, []).append(site)
    out: list[Route] = []
    for site in walked:
        # The nodes that apply here whatever the branches: those of this site's context and the ones around it.
        here = tuple(s.node for s in at_path[site.path] if site.branch[: len(s.branch)] == s.branch)
        if isinstance(site.value, dict):
            out.extend((site, "/properties/" + name, node, here) for name, node in site.node.children("properties"))
        for keyword in ("anyOf", "oneOf"):
            out.extend((site, f"/{keyword}/{i}", branch, here) for i, branch in site.node.children(keyword))
        if "if" in site.kw:
            out.append((site, "/if/then", site.node.child("then"), here))
            out.append((site, "/if/else", site.node.child("else"), here))
    return out


def _taken(ts: ToolSchema, site: Site, route: str, node: Any) -> bool:
    if route.startswith("/properties/"):
        return route[len("/properties/"):] in site.value
    if route.startswith("/if/"):
        met = ts.valid_under(site.kw["if"], site.value)
        return met == route.endswith("then")
    return ts.valid_under(node.raw, site.value)


def _covered(ts: ToolSchema, instance: Any) -> set[tuple[str, str]]:
    return {(s.pointer, r) for s, r, n, _ in _routes(ts, instance) if n is not None and _taken(ts, s, r, n)}


def _through(ts: ToolSchema, site: Site, route: str, node: Any, peers: tuple[Any, ...]) -> Any:
    """The instance with the value at *site*'s location rebuilt (from every node that applies there) to
    go through *route*; None when none is found."""
    shape = model_of(ts).shape(peers)
    if route.startswith("/properties/"):
        # An optional property no base carries (kept out by maxProperties, a dependency, a branch...).
        name = route[len("/properties/"):]
        choice, want = shape, (lambda v: isinstance(v, dict) and name in v)  # noqa: E731
    elif route.startswith("/if/"):
        if_node = site.node.child("if")
        then = route.endswith("then")
        choice = shape.choose(site.pointer + "/if", if_node, node) if then else shape.choose(site.pointer + "/if", node)
        want = (lambda v: ts.valid_under(if_node.raw, v) == then)  # noqa: E731 - the outcome asked for
    else:
        choice = shape.choose(site.pointer + route.rpartition("/")[0], node)
        want = (lambda v: ts.valid_under(node.raw, v))  # noqa: E731


    def fits(value: Any) -> bool:
        # The whole instance stays valid and still reaches this site in its context (the then/else, the
        # branch it lies in) through the route asked for.
        if not want(value):
            return False
        whole = site.put(value)
        return ts.is_valid(whole) and (site.pointer, route) in _covered(ts, whole)

    try:
        return site.put(find_value(choice, fits))
    except Unbuildable:
        return None


def base_instances(ts: ToolSchema) -> list[Any]:
    """Valid instances to build cases from, oracle-checked: the fullest and the smallest (one if they
    coincide), then one through each ``if`` outcome, each ``anyOf``/``oneOf`` branch and each declared
    property the others miss (JSON Schema 2020-12 core 10.2.1-10.2.2, 10.3.2.1), so no-go cases break
    ``then`` and ``else`` keywords, keywords inside every branch, and properties no base carried.

    :raises SchemaProblem: ``unsatisfiable`` when neither construction nor search finds a valid value.
    """
    ts = compile_schema(ts)
    if "_bases" not in ts.__dict__:  # deterministic: made once per compiled schema
        try:
            ts.__dict__["_bases"] = _make_bases(ts)
        except SchemaProblem as exc:
            ts.__dict__["_bases"] = exc
    made = ts.__dict__["_bases"]
    if isinstance(made, SchemaProblem):
        raise made
    return copy.deepcopy(made)


def _make_bases(ts: ToolSchema) -> list[Any]:
    out: list[Any] = []
    found = []
    root = model_of(ts).root_shape
    try:
        # The fullest by construction only: a searched value would not be "fullest" anyway.
        value = build(root, full=True)
        if ts.is_valid(value):
            found.append((True, value))
    except Unbuildable:
        pass
    try:
        found.append((False, example(root)))
    except Unbuildable:
        pass
    if found and not found[0][0]:
        # The fullest by construction was refused: grow the smallest one addition at a time instead.
        found.insert(0, (True, _filled(ts, found[0][1], rounds=32)))
    for _, value in found:
        if all(canonical_dumps(value) != canonical_dumps(v) for v in out):
            out.append(value)
    if not out:
        raise SchemaProblem(
            f"{ts.where}feeler found no value this schema accepts (it may be unsatisfiable); no go case can be made",
            reason="unsatisfiable",
        )
    covered: set[tuple[str, str]] = set()
    # A route that failed from one base may work from another (an integer branch needs the else outcome).
    tried: set[tuple[str, str, int]] = set()
    for base in out:
        covered |= _covered(ts, base)
    index = 0
    while index < len(out) and len(out) < 2 + _BRANCH_BASES:  # bounded: at most _BRANCH_BASES are added
        for site, route, node, peers in _routes(ts, out[index]):
            key = (site.pointer, route)
            if node is None or key in covered or (*key, index) in tried or len(out) >= 2 + _BRANCH_BASES:
                continue
            tried.add((*key, index))
            made = _through(ts, site, route, node, peers)
            if made is not None and all(canonical_dumps(made) != canonical_dumps(v) for v in out):
                out.append(made)
                covered |= _covered(ts, made)
        index += 1
    return out


def _unreached(keyword: str, spec: Any) -> bool:
    """An upper count over feeler._limits.MAX_COUNT (``maxLength: 1e308``): no case is built on or past it."""
    return keyword in UPPER_COUNTS and over_count(spec)


def _sites(ts: ToolSchema, bases: list[Any]) -> Iterator[Site]:
    # A location already reached through an earlier base is not revisited through a later one:
    # each later base only adds what the earlier ones missed (an else branch, an absent optional part).
    done: set[tuple[Any, ...]] = set()
    for base in bases:
        for site in sites(ts, base, synthetic=True):
            key = (site.vpath, site.pointer, site.path, site.key_mode)
            if key not in done:
                done.add(key)
                yield site


def _placed(make: Callable[..., list[Case]]) -> Callable[..., list[Case]]:
    """*make* (a case maker given the schema first) with a pattern that ran past its time budget named with
    the tool and the pattern's place in the schema."""

    @functools.wraps(make)
    def placed(schema: Any, *args: Any, **kwargs: Any) -> list[Case]:
        try:
            return make(schema, *args, **kwargs)
        except SlowPattern as exc:
            if exc.where:
                raise
            ts = compile_schema(schema, recursion_depth=kwargs.get("recursion_depth"))
            raise SlowPattern(exc.pattern, exc.budget, ts.pattern_place(exc.pattern)) from exc

    return placed


@_placed
def go_cases(
    schema: Any, *, draws: int = 0, seed: int = 0, tally: Tally | None = None, recursion_depth: int | None = None
) -> list[Case]:
    """Explicit boundary go cases for *schema* (each bound hit exactly), then *draws* drawn go cases.

    :param schema: a JSON Schema or a :class:`ToolSchema`.
    :param draws: how many drawn go cases to add (:func:`fast_go_cases`; ``source="sampled"``, ``keyword=None``).
    :param seed: the seed for the drawn cases; boundary cases do not depend on it.
    :param tally: filled with the number of candidates the oracle refused.
    :param recursion_depth: how often a recursive reference is followed (default: the compiled schema's,
        else :data:`~feeler.generate._schema.DEFAULT_RECURSION_DEPTH`).
    :raises SchemaProblem: the schema cannot be used (see :class:`ToolSchema`).
    """
    ts = compile_schema(schema, recursion_depth=recursion_depth)
    tally = tally if tally is not None else Tally()
    out: list[Case] = []
    seen: set[tuple[str, str, str]] = set()
    bases = base_instances(ts)
    for site in _sites(ts, bases):
        for keyword, spec in site.kw.items():
            producer = BOUNDARIES.get(keyword)
            if producer is None or _unreached(keyword, spec):
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


def drawn_cases(schema: Any, count: int, *, seed: int = 0, recursion_depth: int | None = None) -> list[Case]:
    """*count* drawn go cases under *seed* (deterministic), ``source="sampled"``; see :func:`fast_go_cases`."""
    return fast_go_cases(schema, count, seed=seed, recursion_depth=recursion_depth)


@_placed
def fast_go_cases(schema: Any, count: int, *, seed: int = 0, recursion_depth: int | None = None) -> list[Case]:
    """*count* go cases built by a seeded sampler outside hypothesis' engine, valid by construction or
    checked by the oracle.

    The compiled model gives one sampler per shape (:mod:`._fast`); values come from
    ``random.Random(seed)``, so the same seed gives the same cases. Where the whole schema's shape is
    exact (:attr:`~._model.Shape.exact`) the values are valid by construction and the oracle audits a
    fixed share of them (every :data:`~._fast.AUDIT_EVERY`-th); a refused one is dropped, said once
    (:class:`~._fast.GeneratorBugWarning`) and from then on every value of the schema is checked. Elsewhere
    every value is checked. The runner proves a case with the oracle before any finding from it is
    recorded, so a sampler bug costs cases, never a wrong finding. If the sampler cannot fill
    *count* (a shape it cannot build and a pool hypothesis could not fill), the rest is drawn from
    :func:`arguments` under the same seed. For shrinking and the example database use
    :func:`arguments` in a ``@given`` test instead.

    :raises SchemaProblem: the schema cannot be used (see :class:`ToolSchema`), or no valid value was
        found (``unsatisfiable``).
    """
    ts = compile_schema(schema, recursion_depth=recursion_depth)
    if count <= 0:
        return []
    values, _ = fast_values(ts, count, random.Random(seed))
    if len(values) < count:
        try:
            values += draws(arguments(ts), count - len(values), seed=seed)
        except SlowPattern:
            raise  # a pattern feeler cannot judge: a schema problem, not a shortage of values
        except Exception:  # noqa: BLE001 - hypothesis gave up too (filter, unsatisfiable node); use what we have
            pass
    if not values:
        raise SchemaProblem(
            f"{ts.where}feeler found no value this schema accepts (it may be unsatisfiable); no go case can be made",
            reason="unsatisfiable",
        )
    # Short of *count* only when both samplers struggled: repeat the values found, in order.
    values = [values[i % len(values)] for i in range(count)]
    # source "sampled" names the sampled (non-boundary) go cases, whichever sampler made them.
    return [Case("go", None, "$", "", value, None, "sampled", "sampled") for value in values]


@_placed
def nogo_cases(
    schema: Any, *, root_type: bool = False, per_keyword: int = 3, tally: Tally | None = None, bases: list[Any] | None = None,
    recursion_depth: int | None = None,
) -> list[Case]:  # fmt: skip
    """No-go cases for *schema*: one keyword violated at a time, at any depth, each proven by the oracle.

    :param bases: valid arguments to break, in order (e.g. go cases the server accepted); each place is
        broken in the first base that reaches it. Invalid ones are skipped; :func:`base_instances` are
        used when none is left (the default).
    :param root_type: also make arguments that are not an object at all (``$`` of another type).
        Off by default: MCP requires ``arguments`` to be an object, so those are protocol probes
        (:func:`feeler.generate.protocol_probes`), not argument cases.
    :param per_keyword: at most this many cases per keyword and location (``type``: one per excluded type).
    :param tally: filled with the number of candidates the oracle refused.
    :param recursion_depth: see :func:`go_cases`.
    :raises SchemaProblem: the schema cannot be used (see :class:`ToolSchema`).
    """
    ts = compile_schema(schema, recursion_depth=recursion_depth)
    tally = tally if tally is not None else Tally()
    out: list[Case] = []
    seen: set[str] = set()
    chosen = [b for b in bases or [] if ts.is_valid(b)]
    for site in _sites(ts, chosen or base_instances(ts)):
        for keyword, spec in site.kw.items():
            mutator = MUTATORS.get(keyword)
            if mutator is None or _unreached(keyword, spec) or (keyword == "type" and site.path == () and not root_type
                                                                 and not site.key_mode):  # fmt: skip
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


#: jsonschema reports these keywords' errors with the schema path of another (``contains``).
_REPORTED_UNDER = {"minContains": "contains", "maxContains": "contains"}


def error_tree(errors: list[ValidationError]) -> Iterator[ValidationError]:
    """Every error in *errors* and, depth first, in their ``context`` (the branches of ``anyOf``/``oneOf``)."""
    stack = list(reversed(errors))
    while stack:  # bounded: the error tree is finite
        error = stack.pop()
        yield error
        stack.extend(reversed(error.context or []))


def _found(errors: list[ValidationError], keyword: str, path: tuple[Any, ...], schema_path: tuple[Any, ...]) -> ValidationError | None:
    for error in error_tree(errors):
        if error.validator == keyword and tuple(error.absolute_path) == path and tuple(error.absolute_schema_path) == schema_path:
            return error
    return None


def _at(instance: Any, path: tuple[Any, ...]) -> Any:
    for part in path:
        instance = instance[part]
    return instance


def _prove(ts: ToolSchema, site: Site, keyword: str, arguments: Any) -> tuple[Case | None, int]:
    errors = ts.errors(arguments)
    reported = (*site.vpath, _REPORTED_UNDER.get(keyword, keyword))
    under = site.under
    if under is None:
        error = _found(errors, keyword, site.path, reported)
        message = error.message if error is not None else None
    else:
        # jsonschema reports a failure inside unevaluatedProperties/unevaluatedItems as that keyword on the
        # container; the keyword itself is then proven by the subschema's own errors on the value there.
        outer = _found(errors, under.keyword, under.path, (*under.vpath, under.keyword))
        inner = None
        if outer is not None:
            value = _at(arguments, under.sub_path)
            own = list(ts.validator_for(under.node.raw).iter_errors(value))
            inner = _found(own, keyword, site.path[len(under.sub_path):], reported[len(under.sub_vpath):])
        message = f"{outer.message} ({inner.message})" if outer is not None and inner is not None else None
    if message is None:
        return None, len(errors)
    return Case("no-go", keyword, json_path(site.path), f"{site.pointer}/{keyword}", arguments, message, "schema"), len(errors)


def arguments(schema: Any, *, recursion_depth: int | None = None) -> st.SearchStrategy[Any]:
    """A hypothesis strategy of arguments *schema* accepts; every value passes the oracle.

    Built from the compiled model with few hypothesis choices per example (:mod:`._arguments`: which
    optional properties, one seed for the values, a branch), so it is fast, and it shrinks towards the
    smallest object (the required properties only, each at its smallest value). Parts not satisfied by
    construction (``not``, ``if``, ``contains``...) are filtered by their own oracle; hypothesis-jsonschema
    is never used. Works with hypothesis' example database and shrinking like any strategy.

    :raises SchemaProblem: the schema cannot be used (see :class:`ToolSchema`).
    """
    ts = compile_schema(schema, recursion_depth=recursion_depth)
    # Filtered by the oracle exactly where the model is not valid by construction (Shape.exact); the
    # tests hold every drawn value to an independent validator (tests/generate/test_gen_strategy.py).
    return arguments_strategy(model_of(ts).root_shape)
