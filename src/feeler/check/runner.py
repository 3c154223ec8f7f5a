"""Runs generated cases against a target and turns every answer into findings.

Per tool: catalog checks, explicit boundary go cases, sampled go cases (a share drawn by hypothesis, the
rest by the fast sampler in a plain loop; a failure is shrunk by hypothesis), no-go cases (one broken
keyword each), then protocol probes. Liveness is checked after a failure or a timeout and every
``alive_every`` calls. A server that exits is restarted (a bounded number of times) so one crash does not
hide the rest; a tool that hangs twice is not called again in that run.
"""

from __future__ import annotations

import bisect
import functools
import json
import os
import random
import re
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from typing import Any

from feeler._signals import held
from feeler.catalog import Catalog, Tool
from feeler.check.findings import Finding, FindingSet
from feeler.check.replay import ANCHORED_CHECKS
from feeler.check.registry import CallContext, Check, CheckSettings, Problem, select_checks
from feeler.connect import capture, open_session
from feeler.errors import RemoteProtocolError, RequestTimeout, SchemaProblem, ServerExited, TargetError
from feeler.generate._schema import DEFAULT_RECURSION_DEPTH
from feeler.redact import Redactor, redactor_for, secret_values
from feeler.session import Exchange, Session
from feeler.target import Target
from feeler.world import ValuePool
from feeler.world.anchor import ToolWorld
from feeler.world.apply import CASE_SOURCES, with_values

__all__ = ["Call", "RunOptions", "RunReport", "Runner", "ToolStats", "secret_values"]

CASE_KINDS_RUN = ("catalog", "go", "no-go", "probe")
#: examples hypothesis may draw while it looks for (and shrinks) a failure the fast sampler met
SHRINK_SEARCH = 200
#: saved failing examples (feeler's JSON ones) retried per tool before the sampled cases
MAX_SAVED_RETRIED = 50
#: sampled go cases drawn by hypothesis per tool and step (all of a check's default 20); the rest come
#: from the fast sampler. A fixed count: hypothesis' engine makes about 350 cases/s where the plain loop
#: makes over 1,500 against the same fast server (bench/README.md), so a campaign's bulk stays fast
HYPOTHESIS_SAMPLES = 20
_JSON_KEY = b".feeler-json"


@dataclass
class RunOptions:
    """What to run. The defaults are the ``standard`` depth (see :mod:`feeler.depth`), locally and in CI.

    :param samples: sampled go cases per tool (besides the boundary cases).
    :param sample_seed: the seed of the sampled cases (the same seed draws the same cases).
    :param allow_destructive: also call tools annotated ``destructiveHint: true``.
    :param dry_run: list the calls that would be made; call nothing but the list methods.
    :param values: values from the server's world (known, learned...) put into the cases
        (:mod:`feeler.world`); the runner adds schema hints to it.
    """

    sample_seed: int = 0
    samples: int = 20
    include: list[str] = field(default_factory=list)
    exclude: list[str] = field(default_factory=list)
    allow_destructive: bool = False
    checks: list[str] | None = None
    skip_checks: list[str] = field(default_factory=list)
    settings: CheckSettings = field(default_factory=CheckSettings)
    probes: bool = True
    shrink: bool = True
    replay_dir: str | None = ".feeler/replays"
    max_restarts: int = 3
    max_timeouts_per_tool: int = 2
    alive_timeout: float = 5.0
    dry_run: bool = False
    #: what must never reach a report or a file (default: :func:`feeler.redact.redactor_for` the target)
    redactor: Redactor | None = None
    values: ValuePool | None = None
    #: learn values from answers (and run the discovery pass); see feeler.world.state
    learn: bool = True
    #: chain runs (hypothesis stateful examples) and the most steps in one; 0 runs: no chain phase
    chain_runs: int = 20
    chain_steps: int = 8
    #: liveness is checked after a failure or a timeout, and after every *alive_every* calls besides
    alive_every: int = 20
    #: hypothesis example database for drawn go cases (None: none); failing examples are retried first
    example_db: Any = None
    #: only these tools (exact names; None: every tool include/exclude leave), e.g. one campaign shard
    only: list[str] | None = None
    #: sessions calling sampled go cases side by side (server processes for stdio; feeler.check.parallel)
    workers: int = 1
    #: how often generation follows a recursive $ref on one path (``--recursion-depth``, ``recursion_depth``)
    recursion_depth: int = DEFAULT_RECURSION_DEPTH


@dataclass
class ToolStats:
    """Counters for one tool, shown in reports."""

    name: str
    skipped: str | None = None
    annotated: bool = True
    go_calls: int = 0
    go_entered: int = 0
    go_is_error: int = 0
    nogo_calls: int = 0
    nogo_stopped_protocol: int = 0
    nogo_stopped_is_error: int = 0
    nogo_entered: int = 0
    probes: int = 0
    timeouts: int = 0
    #: a uniform sample of the call durations (seconds; reservoir sampling, at most LATENCY_SAMPLE kept)
    durations: list[float] = field(default_factory=list)
    #: every call's duration counted in the report's fixed-bound histogram (feeler.report.LATENCY_BOUNDS)
    latency_buckets: list[int] = field(default_factory=list)
    latency_count: int = 0
    latency_max: float | None = None
    #: chain steps that called this tool (feeler.world.chains)
    chain_calls: int = 0
    #: seconds spent in answered calls, per case kind (go, no-go, chain)
    seconds: dict[str, float] = field(default_factory=dict)
    schema_problem: str | None = None
    #: the SchemaProblem's reason for a problem found while making cases (``unsatisfiable``, ``slow-pattern``)
    schema_problem_reason: str | None = None
    #: the explicit cases sent (boundary go and no-go), kept to compute keyword coverage
    cases: list[Any] = field(default_factory=list, repr=False)
    coverage: list[Any] = field(default_factory=list)
    #: entered arguments, refusals and anchored verdicts (:mod:`feeler.world.anchor`)
    world: ToolWorld = field(default_factory=ToolWorld)
    bases: list[Any] = field(default_factory=list, repr=False)
    #: entered go cases per provenance of a learned value ("list_roots /structuredContent/roots/0": 2)
    learned_from: dict[str, int] = field(default_factory=dict)
    #: go cases called whose arguments the oracle then refused (a bug in feeler; no finding from them)
    refuted_go: int = 0

    def counters(self) -> dict[str, Any]:
        """The go and no-go counters, as every JSON output names them (``check --format json`` and the
        report document): ``go`` (calls, entered, stopped: answered isError) and ``noGo`` (calls,
        stoppedByCode: -32602, stoppedByIsError, entered)."""
        return {
            "go": {"calls": self.go_calls, "entered": self.go_entered, "stopped": self.go_is_error},
            "noGo": {
                "calls": self.nogo_calls,
                "stoppedByCode": self.nogo_stopped_protocol,
                "stoppedByIsError": self.nogo_stopped_is_error,
                "entered": self.nogo_entered,
            },
        }

    def coverage_summary(self) -> dict[str, Any] | None:
        """How many schema keywords (by location) were gauged at both ends (a go and a no-go case), and
        which were not, and why (``go``/``noGo``: whether a case of that end was sent); None without cases."""
        if not self.coverage:
            return None
        gaps = []
        for item in self.coverage:
            if item.go and item.nogo:
                continue
            node = str(item.schema_path)
            location = node if node.endswith("/" + item.keyword) else f"{node}/{item.keyword}"
            gaps.append({"keywordLocation": location, "keyword": item.keyword, "go": bool(item.go),
                         "noGo": bool(item.nogo), "reason": item.reason})  # fmt: skip
        return {"keywords": len(self.coverage), "gaugedBothEnds": len(self.coverage) - len(gaps), "gaps": gaps}

    def rejection_style(self, revision: str) -> str:
        """Which way the tool stops no-go cases, and whether that fits protocol version *revision*."""
        p, e = self.nogo_stopped_protocol, self.nogo_stopped_is_error
        if not p and not e:
            return "no no-go case stopped"
        style = "isError results" if e >= p else "-32602 protocol errors"
        prefers_is_error = revision >= "2025-11-25"
        fits = (e >= p) == prefers_is_error or not prefers_is_error
        note = "fits" if fits else "works, but 2025-11-25 and later recommend isError results"
        return f"{style} ({e} isError, {p} -32602): {note} {revision}"


@dataclass
class Call:
    """One planned or made call, for dry runs and logs.

    :param depends: how the real run's call may differ, when that depends on the server's answers
        (values learned from answers; no-go cases anchored on entered go arguments); None: sent as is.
    :param request: the raw line of a protocol probe (its *arguments* are None).
    """

    tool: str | None  # None: a server-wide probe
    kind: str
    keyword: str | None
    path: str | None
    arguments: Any
    source: str = ""
    keyword_location: str | None = None
    depends: str | None = None
    request: str | None = None

    def to_json(self) -> dict[str, Any]:
        """One line of ``feeler check --dry-run`` (JSON Lines)."""
        from feeler._json import to_pointer

        out = {
            "tool": self.tool,
            "kind": self.kind,
            "keyword": self.keyword,
            "keywordLocation": self.keyword_location,
            "instanceLocation": to_pointer(self.path),
            "source": self.source or None,
            "arguments": self.arguments,
            "dependsOnAnswers": self.depends,
        }
        if self.request is not None:
            out["request"] = self.request
        return out


@dataclass
class RunReport:
    target: Target
    catalog: Catalog | None = None
    tools: dict[str, ToolStats] = field(default_factory=dict)
    findings: FindingSet = field(default_factory=FindingSet)
    planned: list[Call] = field(default_factory=list)
    restarts: int = 0
    #: the catalog-wide checks ran (once per run)
    tools_audited: bool = False

    @property
    def revision(self) -> str:
        return self.catalog.revision if self.catalog else "?"

    def exit_code(self) -> int:
        return 1 if self.findings.errors() else 0


class _CaseFailed(Exception):
    """Raised inside the hypothesis property so that it shrinks towards the smallest failing arguments."""


_failure_types: dict[str, type[_CaseFailed]] = {}


def _failure_type(name: str) -> type[_CaseFailed]:
    # One exception type per check: hypothesis tells distinct bugs apart by type, so it shrinks each one.
    if name not in _failure_types:
        ident = re.sub(r"\W", "_", name)
        _failure_types[name] = type(f"Failed_{ident}", (_CaseFailed,), {})
    return _failure_types[name]


class Runner:
    """Check one target.

    :param progress: called with one line of text for each step (tool started, findings...).
    """

    def __init__(
        self,
        target: Target,
        options: RunOptions | None = None,
        *,
        session_options: dict[str, Any] | None = None,
        progress: Callable[[str], None] | None = None,
    ) -> None:
        self.target = target
        self.options = options or RunOptions()
        self.session_options = dict(session_options or {})
        self.progress = progress or (lambda _line: None)
        #: called after each tool call with ``(tool, case, ctx, failed)``; the call log hooks in here
        self.on_call: Callable[[Tool, Any, CallContext, list[str]], None] | None = None
        self._calls_since_alive = 0
        self._unpinged: Any = None  # the last case after which liveness was not checked yet
        self.checks: list[Check] = select_checks(self.options.checks, self.options.skip_checks)
        self.report = RunReport(target=target)
        self.session: Session | None = None
        self.server_probes_sent: set[str] = set()  # server-wide probes go once per run, not once per tool
        self.pool = self.options.values if self.options.values is not None else ValuePool()
        self.last_call: CallContext | None = None
        self._world: Any = None
        self._shrunk: dict[str, set[str]] = {}  # per tool: checks whose failure hypothesis was asked to shrink
        #: sampled go cases of the current tool already called (a resumed campaign skips as many: drawn_skip)
        self.drawn_done = 0
        self.drawn_skip = 0
        self._schemas: dict[str, Any] = {}
        self._workers: Any = None  # feeler.check.parallel.Workers, with --workers N
        self._by_kind: dict[str, list[Check]] = {}
        self.redactor = self.options.redactor or redactor_for(target)
        self.settings = _with_target(self.options.settings, target, self.redactor)

    # -- session handling ----------------------------------------------------------------------------
    def open(self) -> Session:
        if self.session is None:
            self.session = open_session(self.target, **self.session_options)
            if self.report.catalog is None:
                self.report.catalog = capture(self.session)
            else:
                self.session.learn_tools(self.report.catalog.tools)
        return self.session

    def close(self) -> None:
        if self._workers is not None:
            self._workers.close()
        if self.session is not None:
            self.session.close()
            self.session = None

    def _restart(self) -> bool:
        self.close()
        if self.report.restarts >= self.options.max_restarts:
            return False
        self.report.restarts += 1
        self.progress(f"restarting the server (restart {self.report.restarts} of {self.options.max_restarts})")
        try:
            self.open()
        except TargetError as exc:
            self.progress(f"cannot restart the server: {exc}")
            return False
        return True

    @property
    def world(self) -> Any:
        """The run's :class:`feeler.world.state.World` (value pool, learning, chains)."""
        if self._world is None:
            from feeler.world.state import World

            self.open()
            assert self.report.catalog is not None
            self._world = World(self.report.catalog.tool_list(), pool=self.pool, learn=self.options.learn)
        return self._world

    def run_chains(self) -> list[Finding]:
        """The chain phase (sequences of calls linked by returned values); returns its new findings."""
        if self.options.dry_run or self.options.chain_runs <= 0:
            return []
        self.world.discover(self)
        return self.world.chains(self, runs=self.options.chain_runs, steps=self.options.chain_steps)

    def __enter__(self) -> Runner:
        self.open()
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # -- whole run ----------------------------------------------------------------------------------
    def run(self) -> RunReport:
        """Run every selected tool through every case kind; always closes the session."""
        try:
            self.open()
            assert self.report.catalog is not None
            tools = self.tools()
            for tool in tools:
                self._prepare(tool)  # known values are checked before any call: a bad one stops the run at once
            for tool in tools:
                self.run_tool(tool)
            self.run_chains()
        finally:
            self.close()
        self.write_replays()
        return self.report

    def audit(self) -> RunReport:
        """Only the catalog checks (``feeler audit``): the catalog is read, no tool is called."""
        try:
            self.open()
            self.audit_catalog()
            for tool in self.tools():
                self._catalog_checks(tool, self.stats(tool))
        finally:
            self.close()
        return self.report

    def tools(self) -> list[Tool]:
        """The catalog's tools after include/exclude (glob patterns)."""
        from fnmatch import fnmatchcase

        assert self.report.catalog is not None
        out = []
        for tool in self.report.catalog.tool_list():
            if self.options.include and not any(fnmatchcase(tool.name, p) for p in self.options.include):
                continue
            if any(fnmatchcase(tool.name, p) for p in self.options.exclude):
                continue
            if self.options.only is not None and tool.name not in self.options.only:
                continue
            out.append(tool)
        return out

    def schema(self, tool: Tool) -> Any:
        """*tool*'s input schema compiled once per run (:meth:`_compile`, with this run's settings; a
        ``SchemaProblem`` is raised each time, nothing is kept for it)."""
        ts = self._schemas.get(tool.name)
        if ts is None:
            ts = self._schemas[tool.name] = self._compile(tool)
        return ts

    def stats(self, tool: Tool) -> ToolStats:
        if tool.name not in self.report.tools:
            self.report.tools[tool.name] = ToolStats(tool.name, annotated=tool.annotated)
        return self.report.tools[tool.name]

    def skip_reason(self, tool: Tool, option: str = "--allow-destructive") -> str | None:
        """Why *tool* is not called, naming the *option* that would call it (the CLI's, or pytest's)."""
        if tool.destructive and not self.options.allow_destructive:
            return f"annotated destructive (destructiveHint); pass {option} to call it"
        if tool.task_support == "required":
            return ("not tested here: it needs task-augmented calls (execution.taskSupport: required, MCP 2025-11-25 "
                    "tasks) and feeler sends plain calls; its catalog entry is still audited")
        return None

    def run_tool(self, tool: Tool, kinds: tuple[str, ...] = CASE_KINDS_RUN) -> list[Finding]:
        """Run *kinds* of cases for one tool; returns the findings that are new."""
        before = self.report.findings.signatures()
        stats = self.stats(tool)
        if "catalog" in kinds and not self.report.tools_audited:
            self.audit_catalog()
        self.progress(f"{tool.name}: " + ", ".join(kinds))
        if "catalog" in kinds:
            self._catalog_checks(tool, stats)
        reason = self.skip_reason(tool)
        if reason:
            stats.skipped = reason
        elif stats.schema_problem is None:
            try:
                if "go" in kinds:
                    self.world.discover(self)
                    self._go(tool, stats)
                    self._guidance(tool, stats)
                if "no-go" in kinds:
                    self._nogo(tool, stats)
            except SchemaProblem as exc:
                # No value was found although no contradiction was seen up front, or a pattern ran past its
                # time budget: reported like one (schema_usable, a catalog finding), and the run goes on
                # with the other tools.
                stats.schema_problem, stats.schema_problem_reason = str(exc), exc.reason
                self._evaluate(CallContext("catalog", tool, self.revision, self.era, self.settings, stats=stats),
                               only=("schema_usable",))  # fmt: skip
        if "probe" in kinds and self.options.probes and not reason:
            self._probes(tool, stats)
        if "go" in kinds and not reason:
            self._evaluate(CallContext("tool", tool, self.revision, self.era, self.settings, stats=stats))
        if self._unpinged is not None and not self.options.dry_run:
            # Liveness once more at the end of each tool, so a wedged server shows even with few calls.
            last, self._unpinged, self._calls_since_alive = self._unpinged, None, 0
            if self._alive(tool, last):
                self._restart()
        self._coverage(tool, stats)
        return [
            f for f in self.report.findings
            if f.signature not in before or (tool.name in f.tools[1:] and f"{f.signature}@{tool.name}" not in before)
        ]  # fmt: skip

    def audit_catalog(self) -> None:
        """The catalog-wide checks (``catalog`` kind, no tool): names unique, size, near-duplicates."""
        self.report.tools_audited = True
        self._evaluate(CallContext("catalog", None, self.revision, self.era, self.settings, catalog=self.report.catalog))

    @property
    def revision(self) -> str:
        return self.report.catalog.revision if self.report.catalog else "?"

    @property
    def era(self) -> str:
        return self.report.catalog.era if self.report.catalog else "?"

    @staticmethod
    def _coverage(tool: Tool, stats: ToolStats) -> None:
        from feeler.generate import coverage

        if stats.schema_problem is None and stats.cases:
            stats.coverage = coverage(tool.input_schema, stats.cases)

    # -- case kinds ----------------------------------------------------------------------------------
    def _compile(self, tool: Tool) -> Any:
        """The tool's schema compiled with this run's settings; every later use of the same schema
        object (generation, the world layer) gets this compiled form (feeler.generate.compile_schema)."""
        from feeler.generate import compile_schema

        return compile_schema(tool.input_schema, name=tool.name, recursion_depth=self.options.recursion_depth)

    def _catalog_checks(self, tool: Tool, stats: ToolStats) -> None:
        try:
            self._compile(tool)
        except SchemaProblem as exc:
            stats.schema_problem = str(exc)  # the schema_usable check reports it; no cases can be made
        self._evaluate(CallContext("catalog", tool, self.revision, self.era, self.settings))

    def _prepare(self, tool: Tool) -> None:
        if self.skip_reason(tool) is None:
            try:
                self._compile(tool)
                self._bases(tool, self.stats(tool))
            except SchemaProblem:
                pass  # the catalog checks report it when the tool's turn comes

    def _bases(self, tool: Tool, stats: ToolStats) -> list[Any]:
        from feeler.world.plan import prepare_tool

        if not stats.bases:
            stats.bases = prepare_tool(tool, self.pool)
        return stats.bases

    def _go(self, tool: Tool, stats: ToolStats) -> None:
        from feeler.generate import go_cases
        from feeler.world.plan import base_cases

        bases = self._bases(tool, stats)
        planned = base_cases(tool, self.pool, bases) + go_cases(self.schema(tool), seed=self.options.sample_seed)
        for pick, case in enumerate(planned):
            case = with_values(self.schema(tool), tool.name, case, self.pool, pick=pick, sources=CASE_SOURCES)
            stats.cases.append(case)
            if not self._call_case(tool, stats, case) or not self._bound_base(tool, stats, case):
                return
        if self.options.samples <= 0:
            return
        self._drawn_go(tool, stats)  # a dry run draws the same cases (they print instead of going out)

    def _bound_base(self, tool: Tool, stats: ToolStats, case: Any) -> bool:
        """An on-bound go case the tool refused: call its base (the value one step inside the bound) and
        judge the bound against that (``bounds_honoured`` reports only when the base entered)."""
        import dataclasses

        from feeler.world.anchor import BOUND_KEYWORDS, inside_arguments, outcome

        refused = self.last_call
        if self.options.dry_run or refused is None or case.kind != "go" or case.keyword not in BOUND_KEYWORDS:
            return True
        if outcome(refused.exchange, refused.failure) != "stopped":
            return True
        inside = inside_arguments(tool.input_schema, case)
        if inside is None:
            return True
        base = dataclasses.replace(case, keyword=None, arguments=inside, note=f"inside the bound ({case.note})")
        going = self._call_case(tool, stats, base)
        if self.last_call is not None:
            judged = CallContext("go", tool, self.revision, self.era, self.settings, exchange=refused.exchange, case=case)
            judged.base = outcome(self.last_call.exchange, self.last_call.failure)
            judged.base_arguments = inside
            self._evaluate(judged, only=("bounds_honoured",))
        return bool(going)

    def _guidance(self, tool: Tool, stats: ToolStats) -> None:
        """One hint instead of a wall of go refusals when every go case was refused with one message."""
        from feeler.world.guidance import gate_hint

        if not any(check.name == "values_needed" for check in self.checks):
            return  # the hint is not wanted (--skip-check values_needed): every refusal stays a finding
        stats.world.hint = gate_hint(tool, stats.world, stats.go_calls)
        if stats.world.hint:
            self.report.findings.drop(
                f.signature for f in self.report.findings
                # only this tool's own findings: one merged over several tools stays for the others
                if (f.tools or [f.tool]) == [tool.name] and f.kind == "go" and f.error_class in ("refused-valid", "is-error")
            )  # fmt: skip

    def _drawn_go(self, tool: Tool, stats: ToolStats) -> None:
        """Sampled go cases: the failing examples saved in the example database first; then a share of the
        cases drawn by hypothesis (:func:`hypothesis_share`: hypothesis' own saved examples, its drawing,
        which reaches punctuation, empty and odd values the fast sampler seldom makes, and its shrinking);
        then the rest from the fast sampler (:func:`feeler.generate.fast_go_cases`) in a plain loop. A
        fast case that fails a check this tool has not failed before in this run is saved to the example
        database and handed to hypothesis, which looks for the failure with its own strategy and shrinks it
        to the smallest arguments (the smaller finding replaces the larger one). Hypothesis' engine costs
        more per case than the call itself against a fast server (bench/README.md), hence the plain loop
        for the bulk. A resumed step (``drawn_skip``) goes on in the fast part where it stopped."""
        from hypothesis import Phase

        from feeler.generate import fast_go_cases

        if self.options.samples <= 0:
            return
        skip, self.drawn_skip = self.drawn_skip, 0
        self.drawn_done = 0
        by_hypothesis = hypothesis_share(self.options.samples)
        if not skip:
            if self.options.example_db is not None and not self._retry_saved(tool, stats):
                return
            phases = [Phase.reuse] if self.options.example_db is not None else []
            phases += [Phase.generate, Phase.shrink] if self.options.shrink else [Phase.generate]
            if not self._hypothesis_go(tool, stats, phases, by_hypothesis):
                return
        if self.options.samples <= by_hypothesis:
            return
        ts = self.schema(tool)
        cases = fast_go_cases(ts, self.options.samples - by_hypothesis, seed=self.options.sample_seed)
        start = min(skip, len(cases))
        self.drawn_done = start

        def prepared() -> Iterator[Any]:
            for pick in range(start, len(cases)):
                self.drawn_done = pick + 1  # counted as done once it is handed out (a resume skips it)
                yield with_values(ts, tool.name, cases[pick], self.pool, pick=pick, sources=CASE_SOURCES)

        for case, failed in self._call_cases(tool, stats, prepared()):
            if failed is None:
                return  # the tool cannot be called any more (hangs, restarts used up)
            if failed:
                self._on_drawn_failure(tool, stats, case, failed)

    def _call_cases(self, tool: Tool, stats: ToolStats, cases: Iterable[Any]) -> Iterator[tuple[Any, list[str] | None]]:
        """Call each case in turn; yields ``(case, failed checks)``, ``None`` for the checks when the tool
        cannot be called again (then it stops). With ``workers`` > 1 the calls go out on several sessions
        at once (:mod:`feeler.check.parallel`) and are judged here in the order the answers come."""
        if self.options.workers > 1 and not self.options.dry_run:
            if self._workers is None:
                from feeler.check.parallel import Workers

                self._workers = Workers(self, self.options.workers)
            yield from self._workers.call_cases(tool, stats, cases)
            return
        for case in cases:
            try:
                failed = self._call_case(tool, stats, case, collect=True)
            except _ToolAbandoned:
                yield case, None
                return
            yield case, failed

    def _on_drawn_failure(self, tool: Tool, stats: ToolStats, case: Any, failed: list[str]) -> None:
        seen = self._shrunk.setdefault(tool.name, set())
        new = [name for name in failed if name not in seen]
        if not new:
            return
        seen.update(failed)
        db = self.options.example_db
        if db is not None:
            db.save(_database_key(tool) + _JSON_KEY, json.dumps(case.arguments, sort_keys=True, default=str).encode("utf-8"))
        if self.options.shrink:
            from hypothesis import Phase

            self._hypothesis_go(tool, stats, [Phase.generate, Phase.shrink], min(SHRINK_SEARCH, max(self.options.samples, 50)))

    def _retry_saved(self, tool: Tool, stats: ToolStats) -> bool:
        """The failing examples feeler saved as JSON in the example database, retried first (an entry
        that passes is dropped); hypothesis' own saved examples are replayed by :meth:`_hypothesis_go`.
        False when the tool cannot be called any more."""
        from feeler.generate import Case

        db = self.options.example_db
        key = _database_key(tool) + _JSON_KEY
        saved = []
        for raw in db.fetch(key):
            if len(saved) >= MAX_SAVED_RETRIED:
                break
            try:
                saved.append((raw, json.loads(raw.decode("utf-8"))))
            except ValueError:
                db.delete(key, raw)
        for raw, arguments in saved:
            case = Case("go", None, "$", "", arguments, None, "sampled", "saved failing example")
            try:
                failed = self._call_case(tool, stats, case, collect=True)
            except _ToolAbandoned:
                return False
            if failed:
                self._shrunk.setdefault(tool.name, set()).update(failed)
            else:
                db.delete(key, raw)  # fixed: not retried again
        return True

    def _hypothesis_go(self, tool: Tool, stats: ToolStats, phases: list[Any], max_examples: int) -> bool:
        """Go cases drawn by hypothesis (``feeler.generate.arguments``) in a property, so that a failure
        is shrunk to the smallest arguments and kept in the example database. False when the tool cannot
        be called any more."""
        import unittest

        from hypothesis import HealthCheck, Verbosity, given, seed, settings
        from hypothesis import strategies as st

        from feeler.generate import Case, arguments

        @settings(
            max_examples=max_examples,
            deadline=None,
            database=self.options.example_db,
            phases=phases,
            suppress_health_check=list(HealthCheck),
            verbosity=Verbosity.quiet,
            report_multiple_bugs=True,
        )
        @seed(self.options.sample_seed)
        @given(arguments(self.schema(tool)), st.integers(0, 255) if len(self.pool) else st.just(0))
        def prop(args: Any, pick: int) -> None:
            case = Case("go", None, "$", "", args, None, "sampled", "sampled")
            case = with_values(self.schema(tool), tool.name, case, self.pool, pick=pick, sources=CASE_SOURCES)
            failed = self._call_case(tool, stats, case, collect=True)
            if failed:
                self._shrunk.setdefault(tool.name, set()).update(failed)
                raise _failure_type(failed[0])(failed)

        # One database key per tool and schema: hypothesis would otherwise key every tool alike.
        prop._hypothesis_internal_database_key = _database_key(tool)  # type: ignore[attr-defined]
        try:
            prop()
        except (_CaseFailed, unittest.SkipTest):
            pass
        except BaseException as exc:  # an exception group of several distinct failures, or our abort
            # (a flaky server, e.g. one that is only sometimes slow, gives hypothesis a FlakyFailure group
            # of our own exceptions: that is the server's behaviour, already recorded as findings)
            if isinstance(exc, (KeyboardInterrupt, SystemExit)) or not all(
                isinstance(e, (_CaseFailed, _ToolAbandoned)) for e in _leaves(exc)
            ):
                raise
            if any(isinstance(e, _ToolAbandoned) for e in _leaves(exc)):
                return False
        return True

    def _nogo(self, tool: Tool, stats: ToolStats) -> None:
        from feeler.generate import Case, nogo_cases
        from feeler.world.plan import base_cases, nogo_bases

        bases = self._bases(tool, stats)
        if not stats.go_calls and not self.options.dry_run:
            # No go case ran in this process (e.g. a pytest-xdist worker got only the no-go item): call the
            # base cases first, so that no-go verdicts can be anchored on what the tool accepts.
            for case in base_cases(tool, self.pool, bases) or [
                Case("go", None, "$", "", b, None, "boundary", "base") for b in bases
            ]:
                if not self._call_case(tool, stats, case):
                    return
        for case in nogo_cases(self.schema(tool), bases=nogo_bases(stats.world, tool, self.pool, bases)):
            stats.cases.append(case)
            if not self._call_case(tool, stats, case):
                return

    def _probes(self, tool: Tool, stats: ToolStats) -> None:
        from feeler.check.probes import run_probes

        run_probes(self, tool, stats)

    # -- one call --------------------------------------------------------------------------------
    def _call_case(self, tool: Tool, stats: ToolStats, case: Any, *, collect: bool = False) -> Any:
        """Call *tool* with *case*; run the checks. Returns False when the tool should not be called again
        (or, with *collect*, the names of the checks that failed, for the hypothesis property)."""
        if self.options.dry_run:
            self.report.planned.append(
                Call(tool.name, case.kind, case.keyword, case.path, case.arguments, case.source, case.schema_path or None,
                     self._depends(tool, case))  # fmt: skip
            )
            return [] if collect else True
        if stats.timeouts >= self.options.max_timeouts_per_tool:
            if collect:
                raise _ToolAbandoned(tool.name)
            return False
        ctx = CallContext(case.kind, tool, self.revision, self.era, self.settings, case=case)
        self.last_call = ctx
        try:
            session = self.open()
            ctx.exchange = session.call_tool(tool.name, case.arguments)
        except (RequestTimeout, ServerExited) as exc:
            ctx.failure = exc
            if isinstance(exc, RequestTimeout):
                stats.timeouts += 1
        except RemoteProtocolError as exc:
            if exc.exchange is not None:
                ctx.exchange = exc.exchange  # an answer came, with a wrong id: the envelope check judges it
            else:
                ctx.failure = exc
        except TargetError as exc:
            ctx.failure = exc
        failed = self._judge(tool, stats, case, ctx)
        self._calls_since_alive += 1
        alive_failed: list[str] = []
        self._unpinged = case
        if failed or ctx.failure is not None or self._calls_since_alive >= max(1, self.options.alive_every):
            self._calls_since_alive, self._unpinged = 0, None
            alive_failed = self._alive(tool, case)
        if alive_failed or isinstance(ctx.failure, ServerExited):
            if not self._restart():
                if collect:
                    raise _ToolAbandoned(tool.name)
                return False
        if collect:
            return failed + alive_failed
        return stats.timeouts < self.options.max_timeouts_per_tool

    def _depends(self, tool: Tool, case: Any) -> str | None:
        """How the real run's call may differ from *case* (a dry run says so on each line)."""
        if case.kind == "no-go":
            return "anchored: the real run breaks this keyword in go arguments the tool entered, so its arguments may differ"
        if self.world.takes_learned(tool.name):
            return "values learned from earlier answers may fill identifier, path or name inputs"
        return None

    def _judge(self, tool: Tool, stats: ToolStats, case: Any, ctx: CallContext) -> list[str]:
        """Count, learn from, check and log one finished call; returns the checks that found an error."""
        with held():  # a stop signal waits until the call is counted, judged and logged
            self._count(stats, ctx)
            self.world.after_call(tool, case, ctx, stats)
            failed = self._evaluate(ctx)
            if self.on_call is not None:
                self.on_call(tool, case, ctx, failed)
        return failed

    def _count(self, stats: ToolStats, ctx: CallContext) -> None:
        ex = ctx.exchange
        if ex is not None and ex.finished is not None:
            note_duration(stats, ex.duration, ctx.kind)
        if ctx.kind == "go":
            stats.world.note_go(ctx.case, ex, ctx.failure)
            stats.go_calls += 1
            if ex is not None and isinstance(ex.result, dict):
                if ex.is_error_result:
                    stats.go_is_error += 1
                else:
                    stats.go_entered += 1
        elif ctx.kind == "no-go":
            verdict = stats.world.note_nogo(ctx.case, ex, ctx.failure)
            ctx.base_arguments = stats.world.base_of(ctx.case)
            ctx.base = "entered" if verdict in ("stopped", "entered") and ctx.base_arguments is not None else None
            stats.nogo_calls += 1
            if ex is not None and ex.error is not None and ex.error.get("code") == -32602:
                stats.nogo_stopped_protocol += 1
            elif ex is not None and ex.is_error_result:
                stats.nogo_stopped_is_error += 1
            elif ex is not None and isinstance(ex.result, dict):
                stats.nogo_entered += 1

    def _alive(self, tool: Tool, case: Any) -> list[str]:
        ctx = CallContext("alive", tool, self.revision, self.era, self.settings, case=case)
        try:
            session = self.open()
            ctx.exchange = session.ping(timeout=self.options.alive_timeout)
        except TargetError as exc:
            ctx.failure = exc
        return self._evaluate(ctx)

    def _evaluate(self, ctx: CallContext, only: tuple[str, ...] | None = None) -> list[str]:
        """Run every check (or those named in *only*) on *ctx*; record findings; return the names of
        checks that found an error."""
        failed: list[str] = []
        checks = self._by_kind.get(ctx.kind)
        if checks is None:  # the checks that apply to this kind of call, in registry order (once per kind)
            checks = self._by_kind[ctx.kind] = [c for c in self.checks if ctx.kind in c.applies_to]
        found: list[tuple[str, list[Problem]]] = []
        for check in checks:
            if only is not None and check.name not in only:
                continue
            when = check.when
            if when is not None and not when(ctx):
                continue  # the check's own first guard: nothing to find on this call
            problems = check.problems(ctx)
            if problems:
                found.append((check.name, problems))
        if found and ctx.kind == "go" and self._refuted(ctx):
            return failed
        for name, problems in found:
            for problem in problems:
                self._record(ctx, name, problem)
                if problem.severity == "error":
                    failed.append(name)
        return failed

    def _refuted(self, ctx: CallContext) -> bool:
        """Whether the oracle refuses the arguments of *ctx*'s go case. Sampled go cases are valid by
        construction (the oracle audits a share of them: :func:`feeler.generate.fast_go_cases`), so a
        go case is proven here, before any finding from it is recorded: a refused one gives no finding
        (the case is wrong, not the server: a bug in feeler), is counted (``ToolStats.refuted_go``) and
        said once per tool (:class:`feeler.generate.GeneratorBugWarning`)."""
        case, tool = ctx.case, ctx.tool
        if tool is None or case is None or not hasattr(case, "arguments"):
            return False
        try:
            ts = self.schema(tool)
        except SchemaProblem:
            return False
        if ts.is_valid(case.arguments):
            return False
        stats = self.stats(tool)
        stats.refuted_go += 1
        if stats.refuted_go == 1:
            import warnings

            from feeler.generate import GeneratorBugWarning

            what = getattr(case, "note", "") or getattr(case, "source", "") or "go case"
            note = (f"{tool.name}: feeler made go arguments that its own oracle refuses ({what}): "
                    "a bug in feeler, please report it with the schema; such a case gives no finding")  # fmt: skip
            self.progress(note)
            warnings.warn(note, GeneratorBugWarning, stacklevel=2)
        return True

    def _record(self, ctx: CallContext, check: str, problem: Problem) -> None:
        case = ctx.case
        ex = ctx.exchange
        red = self.redactor
        request, answer = self._request_text(ctx), self._answer_text(ex)
        finding = Finding(
            check=check,
            severity=problem.severity or "error",
            tool=ctx.tool.name if ctx.tool else None,
            kind=ctx.kind if ctx.kind != "alive" else (getattr(case, "kind", None) or "alive"),
            message=red.text(problem.message),
            error_class=problem.error_class,
            keyword=getattr(case, "keyword", None),
            path=getattr(case, "path", None),
            keyword_location=getattr(case, "schema_path", None) or None,
            source=getattr(case, "source", None),
            boundary=bool(getattr(case, "is_boundary", False)),
            arguments=red.json(getattr(case, "arguments", None)),
            revision=self.revision,
            request_text=red.text(request) if request else request,
            answer_text=red.text(answer) if answer else answer,
            tools=list(problem.tools),
        )
        if ctx.base_arguments is not None and check in ANCHORED_CHECKS:
            finding.extra["base"] = red.json(ctx.base_arguments)
        if self.report.findings.add(finding):
            self.progress(f"  {finding.severity}: [{check}] {finding.tool or ''} {finding.message}")

    def _request_text(self, ctx: CallContext) -> str | None:
        # The replay re-sends the call that showed the finding (for "alive", the case before the ping).
        case = ctx.case
        if ctx.kind == "alive" and case is not None and ctx.tool is not None:
            return json.dumps({"jsonrpc": "2.0", "id": 1, "method": "tools/call", "params": {"name": ctx.tool.name, "arguments": case.arguments}})
        if ctx.exchange is not None:
            return ctx.exchange.request_text
        if case is not None and ctx.tool is not None and hasattr(case, "arguments"):
            return json.dumps({"jsonrpc": "2.0", "id": 1, "method": "tools/call", "params": {"name": ctx.tool.name, "arguments": case.arguments}})
        return getattr(case, "text", None)

    @staticmethod
    def _answer_text(ex: Exchange | None) -> str | None:
        if ex is None:
            return None
        answers = [f.text for f in ex.frames if f.direction == "in"]
        return answers[-1] if answers else None

    def write_replays(self, findings: list[Finding] | None = None) -> None:
        """Write the replay file of each of *findings* (default: every finding of the run); a file is named
        after the finding's signature, so writing it again updates it."""
        from feeler.check.replay import write_replay

        if not self.options.replay_dir or self.options.dry_run:
            return
        for finding in self.report.findings if findings is None else findings:
            if finding.request_text:
                finding.replay = write_replay(self.options.replay_dir, self.target, finding, self.settings)


def hypothesis_share(samples: int) -> int:
    """How many of *samples* sampled go cases hypothesis draws (HYPOTHESIS_SAMPLES at most)."""
    return min(samples, HYPOTHESIS_SAMPLES)


#: durations kept per tool for the percentiles (the histogram counts every call)
LATENCY_SAMPLE = 4096
_sampler = random.Random(0)


@functools.cache
def _latency_bounds() -> tuple[float, ...]:
    from feeler.report.document import LATENCY_BOUNDS  # imported on first use (the report layer is heavier)

    return LATENCY_BOUNDS


def note_duration(stats: ToolStats, seconds: float, kind: str) -> None:
    """Count one call's duration: in the time per case kind, exactly in the fixed-bound histogram, and in
    the bounded uniform sample the percentiles come from (reservoir sampling, Vitter's algorithm R), so
    memory stays flat."""
    bounds = _latency_bounds()
    stats.seconds[kind] = stats.seconds.get(kind, 0.0) + seconds

    if not stats.latency_buckets:
        stats.latency_buckets = [0] * (len(bounds) + 1)
    stats.latency_buckets[bisect.bisect_left(bounds, seconds)] += 1
    stats.latency_count += 1
    if stats.latency_max is None or seconds > stats.latency_max:
        stats.latency_max = seconds
    if len(stats.durations) < LATENCY_SAMPLE:
        stats.durations.append(seconds)
    else:
        slot = _sampler.randrange(stats.latency_count)
        if slot < LATENCY_SAMPLE:
            stats.durations[slot] = seconds


def _leaves(exc: BaseException, depth: int = 0) -> list[BaseException]:
    """The non-group exceptions inside *exc* (nested exception groups flattened, bounded depth)."""
    inner = getattr(exc, "exceptions", None)
    if not inner or depth > 20:
        return [exc]
    return [leaf for e in inner for leaf in _leaves(e, depth + 1)]


def _with_target(settings: CheckSettings, target: Target, redactor: Redactor) -> CheckSettings:
    """*settings* completed with what the target tells: its secrets and the paths the user gave it."""
    from dataclasses import replace

    given: set[str] = set(settings.given_paths)
    base = target.cwd or os.getcwd()
    for arg in [*target.command, *([target.cwd] if target.cwd else [])]:
        for part in str(arg).split("="):
            if os.path.isabs(part) or (os.sep in part and not part.startswith("-")):
                full = os.path.normpath(os.path.join(base, part))
                given |= {full, os.path.realpath(full)}
    paths = tuple(sorted(given))
    secrets = settings.secrets or redactor.values
    return replace(settings, secrets=secrets, given_paths=paths)
def _database_key(tool: Tool) -> bytes:
    # The tool and its schema, not the target spec: shards and workers on other machines share examples.
    import hashlib

    schema = json.dumps(tool.input_schema, sort_keys=True, default=str)
    return hashlib.sha256(f"feeler|{tool.name}|{schema}".encode()).digest()


class _ToolAbandoned(Exception):
    """Stops the hypothesis property when the tool cannot be called any more (hangs, restarts used up)."""

