"""Runs generated cases against a target and turns every answer into findings.

Per tool: catalog checks, explicit boundary go cases, hypothesis-drawn go cases (shrunk on failure),
no-go cases (one broken keyword each), then protocol probes. After each case the server's liveness is
checked. A server that exits is restarted (a bounded number of times) so one crash does not hide the
rest; a tool that hangs twice is not called again in that run.
"""

from __future__ import annotations

import json
import os
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from feeler._signals import held
from feeler.catalog import Catalog, Tool
from feeler.check.findings import Finding, FindingSet
from feeler.check.registry import CallContext, Check, CheckSettings, Problem, select_checks
from feeler.connect import capture, open_session
from feeler.errors import RemoteProtocolError, RequestTimeout, SchemaProblem, ServerExited, TargetError
from feeler.generate._schema import DEFAULT_RECURSION_DEPTH
from feeler.redact import Redactor, redactor_for, secret_values
from feeler.session import Exchange, Session
from feeler.target import Target
from feeler.world import ValuePool
from feeler.world.anchor import ToolWorld

__all__ = ["Call", "RunOptions", "RunReport", "Runner", "ToolStats", "secret_values"]

CASE_KINDS_RUN = ("catalog", "go", "no-go", "probe")


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
    durations: list[float] = field(default_factory=list)
    schema_problem: str | None = None
    #: the explicit cases sent (boundary go and no-go), kept to compute keyword coverage
    cases: list[Any] = field(default_factory=list, repr=False)
    coverage: list[Any] = field(default_factory=list)
    #: entered arguments, refusals and anchored verdicts (:mod:`feeler.world.anchor`)
    world: ToolWorld = field(default_factory=ToolWorld)
    bases: list[Any] = field(default_factory=list, repr=False)
    #: entered go cases per provenance of a learned value ("list_roots /structuredContent/roots/0": 2)
    learned_from: dict[str, int] = field(default_factory=dict)

    def coverage_summary(self) -> dict[str, Any]:
        """How many schema keywords (by location) were gauged at both ends (a go and a no-go case), and
        which were not, and why."""
        full = [c for c in self.coverage if c.go and c.nogo]
        gaps = [
            {"keywordLocation": f"{c.schema_path}/{c.keyword}", "keyword": c.keyword, "go": c.go, "nogo": c.nogo, "reason": c.reason}
            for c in self.coverage
            if not (c.go and c.nogo)
        ]
        return {"keywords": len(self.coverage), "gaugedBothEnds": len(full), "gaps": gaps}

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
    """One planned or made call, for dry runs and logs."""

    tool: str
    kind: str
    keyword: str | None
    path: str | None
    arguments: Any
    source: str = ""
    keyword_location: str | None = None

    def to_json(self) -> dict[str, Any]:
        """One line of ``feeler check --dry-run`` (JSON Lines)."""
        from feeler._json import to_pointer

        return {
            "tool": self.tool,
            "kind": self.kind,
            "keyword": self.keyword,
            "keywordLocation": self.keyword_location,
            "instanceLocation": to_pointer(self.path),
            "source": self.source or None,
            "arguments": self.arguments,
        }


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
        self._write_replays()
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
            out.append(tool)
        return out

    def stats(self, tool: Tool) -> ToolStats:
        if tool.name not in self.report.tools:
            self.report.tools[tool.name] = ToolStats(tool.name, annotated=tool.annotated)
        return self.report.tools[tool.name]

    def skip_reason(self, tool: Tool) -> str | None:
        if tool.destructive and not self.options.allow_destructive:
            return "annotated destructive (destructiveHint); pass --allow-destructive to call it"
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
                    if not self.options.dry_run:
                        self.world.discover(self)
                    self._go(tool, stats)
                    self._guidance(tool, stats)
                if "no-go" in kinds:
                    self._nogo(tool, stats)
            except SchemaProblem as exc:
                # No value was found although no contradiction was seen up front: reported like one
                # (schema_usable, a catalog finding), and the run goes on with the other tools.
                stats.schema_problem = str(exc)
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
        from feeler.generate import arguments, go_cases
        from feeler.world.apply import CASE_SOURCES, with_values
        from feeler.world.plan import base_cases

        bases = self._bases(tool, stats)
        planned = base_cases(tool, self.pool, bases) + go_cases(tool.input_schema, seed=self.options.sample_seed)
        for pick, case in enumerate(planned):
            case = with_values(tool.input_schema, tool.name, case, self.pool, pick=pick, sources=CASE_SOURCES)
            stats.cases.append(case)
            if not self._call_case(tool, stats, case) or not self._bound_base(tool, stats, case):
                return
        if self.options.samples <= 0 or self.options.dry_run:
            if self.options.dry_run:
                from feeler.generate import drawn_cases

                for pick, case in enumerate(drawn_cases(tool.input_schema, self.options.samples, seed=self.options.sample_seed)):
                    self._call_case(tool, stats, with_values(tool.input_schema, tool.name, case, self.pool, pick=pick, sources=CASE_SOURCES))
            return
        self._drawn_go(tool, stats, arguments(tool.input_schema))

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

    def _drawn_go(self, tool: Tool, stats: ToolStats, strategy: Any) -> None:
        """Sampled go cases in a hypothesis property, so a failure is shrunk to the smallest arguments."""
        from hypothesis import HealthCheck, Phase, Verbosity, given, seed, settings
        from hypothesis import strategies as st

        from feeler.generate import Case
        from feeler.world.apply import CASE_SOURCES, with_values

        phases = [Phase.generate, Phase.shrink] if self.options.shrink else [Phase.generate]
        if self.options.example_db is not None:
            phases.insert(0, Phase.reuse)

        @settings(
            max_examples=self.options.samples,
            deadline=None,
            database=self.options.example_db,
            phases=phases,
            suppress_health_check=list(HealthCheck),
            verbosity=Verbosity.quiet,
            report_multiple_bugs=True,
        )
        @seed(self.options.sample_seed)
        @given(strategy, st.integers(0, 255) if len(self.pool) else st.just(0))
        def prop(args: Any, pick: int) -> None:
            case = Case("go", None, "$", "", args, None, "sampled", "sampled")
            case = with_values(tool.input_schema, tool.name, case, self.pool, pick=pick, sources=CASE_SOURCES)
            failed = self._call_case(tool, stats, case, collect=True)
            if failed:
                raise _failure_type(failed[0])(failed)

        # One database key per tool and schema: hypothesis would otherwise key every tool alike.
        prop._hypothesis_internal_database_key = _database_key(tool)  # type: ignore[attr-defined]
        try:
            prop()
        except _CaseFailed:
            pass
        except BaseException as exc:  # an exception group of several distinct failures, or our abort
            # (a flaky server, e.g. one that is only sometimes slow, gives hypothesis a FlakyFailure group
            # of our own exceptions: that is the server's behaviour, already recorded as findings)
            if isinstance(exc, (KeyboardInterrupt, SystemExit)) or not all(
                isinstance(e, (_CaseFailed, _ToolAbandoned)) for e in _leaves(exc)
            ):
                raise

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
        for case in nogo_cases(tool.input_schema, bases=nogo_bases(stats.world, tool, self.pool, bases)):
            stats.cases.append(case)
            if not self._call_case(tool, stats, case):
                return

    def _probes(self, tool: Tool, stats: ToolStats) -> None:
        from feeler.check.probes import run_probes

        if self.options.dry_run:
            return
        run_probes(self, tool, stats)

    # -- one call --------------------------------------------------------------------------------
    def _call_case(self, tool: Tool, stats: ToolStats, case: Any, *, collect: bool = False) -> Any:
        """Call *tool* with *case*; run the checks. Returns False when the tool should not be called again
        (or, with *collect*, the names of the checks that failed, for the hypothesis property)."""
        if self.options.dry_run:
            self.report.planned.append(
                Call(tool.name, case.kind, case.keyword, case.path, case.arguments, case.source, case.schema_path or None)
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
        with held():  # a stop signal waits until the call is counted, judged and logged
            self._count(stats, ctx)
            self.world.after_call(tool, case, ctx, stats)
            failed = self._evaluate(ctx)
            if self.on_call is not None:
                self.on_call(tool, case, ctx, failed)
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

    def _count(self, stats: ToolStats, ctx: CallContext) -> None:
        ex = ctx.exchange
        if ex is not None and ex.finished is not None:
            if len(stats.durations) < 10_000:
                stats.durations.append(ex.duration)
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
            ctx.base = "entered" if verdict in ("stopped", "entered") and stats.world.base_of(ctx.case) is not None else None
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
        for check in self.checks:
            if only is not None and check.name not in only:
                continue
            for problem in check.run(ctx):
                self._record(ctx, check.name, problem)
                if problem.severity == "error":
                    failed.append(check.name)
        return failed

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

    def _write_replays(self) -> None:
        from feeler.check.replay import write_replay

        if not self.options.replay_dir or self.options.dry_run:
            return
        for finding in self.report.findings:
            if finding.request_text:
                finding.replay = write_replay(self.options.replay_dir, self.target, finding, self.settings)


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

