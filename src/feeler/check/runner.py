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

from feeler.catalog import Catalog, Tool
from feeler.check.findings import Finding, FindingSet
from feeler.check.registry import CallContext, Check, CheckSettings, Problem, select_checks
from feeler.connect import capture, open_session
from feeler.errors import RemoteProtocolError, RequestTimeout, SchemaProblem, ServerExited, TargetError
from feeler.session import Exchange, Session
from feeler.target import Target

__all__ = ["Call", "RunOptions", "RunReport", "Runner", "ToolStats", "secret_values"]

CASE_KINDS_RUN = ("catalog", "go", "no-go", "probe")
_SECRET_NAME = re.compile(r"KEY|TOKEN|SECRET|PASSWORD|PASSWD|CREDENTIAL|PRIVATE|AUTH", re.IGNORECASE)


def secret_values(extra_env: dict[str, str] | None = None) -> tuple[str, ...]:
    """Values of secret-looking environment variables (long enough not to match by chance)."""
    env = {**os.environ, **(extra_env or {})}
    return tuple(sorted({v for k, v in env.items() if _SECRET_NAME.search(k) and len(v) >= 8}))


@dataclass
class RunOptions:
    """What to run. The defaults are the ``standard`` depth (see :mod:`feeler.depth`), locally and in CI.

    :param samples: sampled go cases per tool (besides the boundary cases).
    :param sample_seed: the seed of the sampled cases (the same seed draws the same cases).
    :param allow_destructive: also call tools annotated ``destructiveHint: true``.
    :param dry_run: list the calls that would be made; call nothing but the list methods.
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
        self.checks: list[Check] = select_checks(self.options.checks, self.options.skip_checks)
        self.report = RunReport(target=target)
        self.session: Session | None = None
        self.server_probes_sent: set[str] = set()  # server-wide probes go once per run, not once per tool
        settings = self.options.settings
        if not settings.secrets:
            settings = CheckSettings(settings.strict_go, settings.latency_budget, secret_values(dict(target.env)))
        self.settings = settings

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
            for tool in self.tools():
                self.run_tool(tool)
        finally:
            self.close()
        self._write_replays()
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
        self.progress(f"{tool.name}: " + ", ".join(kinds))
        if "catalog" in kinds:
            self._catalog_checks(tool, stats)
        reason = self.skip_reason(tool)
        if reason:
            stats.skipped = reason
        elif stats.schema_problem is None:
            if "go" in kinds:
                self._go(tool, stats)
            if "no-go" in kinds:
                self._nogo(tool, stats)
        if "probe" in kinds and self.options.probes and not reason:
            self._probes(tool, stats)
        if "go" in kinds and not reason:
            self._evaluate(CallContext("tool", tool, self.revision, self.era, self.settings, stats=stats))
        self._coverage(tool, stats)
        return [f for f in self.report.findings if f.signature not in before]

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
    def _catalog_checks(self, tool: Tool, stats: ToolStats) -> None:
        from feeler.generate import compile_schema

        try:
            compile_schema(tool.input_schema)
        except SchemaProblem as exc:
            stats.schema_problem = str(exc)  # the schema_usable check reports it; no cases can be made
        self._evaluate(CallContext("catalog", tool, self.revision, self.era, self.settings))

    def _go(self, tool: Tool, stats: ToolStats) -> None:
        from feeler.generate import arguments, go_cases

        for case in go_cases(tool.input_schema, seed=self.options.sample_seed):
            stats.cases.append(case)
            if not self._call_case(tool, stats, case):
                return
        if self.options.samples <= 0 or self.options.dry_run:
            if self.options.dry_run:
                from feeler.generate import drawn_cases

                for case in drawn_cases(tool.input_schema, self.options.samples, seed=self.options.sample_seed):
                    self._call_case(tool, stats, case)
            return
        self._drawn_go(tool, stats, arguments(tool.input_schema))

    def _drawn_go(self, tool: Tool, stats: ToolStats, strategy: Any) -> None:
        """Sampled go cases in a hypothesis property, so a failure is shrunk to the smallest arguments."""
        from hypothesis import HealthCheck, Phase, Verbosity, given, seed, settings

        from feeler.generate import Case

        phases = [Phase.generate, Phase.shrink] if self.options.shrink else [Phase.generate]

        @settings(
            max_examples=self.options.samples,
            deadline=None,
            database=None,
            phases=phases,
            suppress_health_check=list(HealthCheck),
            verbosity=Verbosity.quiet,
            report_multiple_bugs=True,
        )
        @seed(self.options.sample_seed)
        @given(strategy)
        def prop(args: Any) -> None:
            case = Case("go", None, "$", "", args, None, "sampled", "sampled")
            failed = self._call_case(tool, stats, case, collect=True)
            if failed:
                raise _failure_type(failed[0])(failed)

        try:
            prop()
        except _CaseFailed:
            pass
        except BaseException as exc:  # an exception group of several distinct failures, or our abort
            if not all(isinstance(e, _CaseFailed) for e in getattr(exc, "exceptions", [exc])):
                if isinstance(exc, (KeyboardInterrupt, SystemExit)):
                    raise
                if not isinstance(exc, _ToolAbandoned):
                    raise

    def _nogo(self, tool: Tool, stats: ToolStats) -> None:
        from feeler.generate import nogo_cases

        for case in nogo_cases(tool.input_schema):
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
        self._count(stats, ctx)
        failed = self._evaluate(ctx)
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
            stats.go_calls += 1
            if ex is not None and isinstance(ex.result, dict):
                if ex.is_error_result:
                    stats.go_is_error += 1
                else:
                    stats.go_entered += 1
        elif ctx.kind == "no-go":
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

    def _evaluate(self, ctx: CallContext) -> list[str]:
        """Run every check on *ctx*; record findings; return the names of checks that found an error."""
        failed: list[str] = []
        for check in self.checks:
            for problem in check.run(ctx):
                self._record(ctx, check.name, problem)
                if problem.severity == "error":
                    failed.append(check.name)
        return failed

    def _record(self, ctx: CallContext, check: str, problem: Problem) -> None:
        case = ctx.case
        ex = ctx.exchange
        finding = Finding(
            check=check,
            severity=problem.severity or "error",
            tool=ctx.tool.name if ctx.tool else None,
            kind=ctx.kind if ctx.kind != "alive" else (getattr(case, "kind", None) or "alive"),
            message=problem.message,
            error_class=problem.error_class,
            keyword=getattr(case, "keyword", None),
            path=getattr(case, "path", None),
            keyword_location=getattr(case, "schema_path", None) or None,
            source=getattr(case, "source", None),
            boundary=bool(getattr(case, "is_boundary", False)),
            arguments=getattr(case, "arguments", None),
            revision=self.revision,
            request_text=self._request_text(ctx),
            answer_text=self._answer_text(ex),
        )
        if self.report.findings.add(finding):
            self.progress(f"  {finding.severity}: [{check}] {finding.tool or ''} {problem.message}")

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


class _ToolAbandoned(Exception):
    """Stops the hypothesis property when the tool cannot be called any more (hangs, restarts used up)."""

