"""The world of one run: the value pool, what was learned from answers, and the chain phase.

The runner holds one :class:`World` and calls it at four points (nothing else in the runner knows
about learning or chains):

* :meth:`World.discover` once, before the first go case: the discovery pass calls the read-only tools
  that need no arguments (:func:`feeler.world.learn.listings`) so their answers seed the pool;
* :meth:`World.offer` before each go case: the pool's values go in (:func:`feeler.world.apply.with_values`,
  oracle-checked), and a case that got a learned value says where it came from in its ``note``;
* :meth:`World.after_call` after each call: a successful answer is learned from, and counted by source;
* :meth:`World.chains` once at the end: the chain phase (:mod:`feeler.world.chains`).
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Iterable
from typing import TYPE_CHECKING, Any

from feeler.catalog import Tool
from feeler.world.apply import case_source, with_values
from feeler.world.learn import Learner, listings
from feeler.world.values import ValuePool

if TYPE_CHECKING:
    from feeler.check.findings import Finding
    from feeler.check.registry import CallContext
    from feeler.check.runner import Runner

__all__ = ["World"]

_BASES_PER_TOOL = 8


class World:
    """Values and learning for one run.

    :param tools: the catalog's tools (their input names decide where learned values are offered).
    :param pool: the run's value pool (known values may already be in it).
    :param learn: learn values from answers and run the discovery pass.
    """

    def __init__(self, tools: Iterable[Tool], *, pool: ValuePool | None = None, learn: bool = True) -> None:
        self.pool = pool if pool is not None else ValuePool()
        self.learner = Learner(self.pool, tools) if learn else None
        #: arguments of go cases each tool accepted (the chains' bases), at most a few per tool
        self.entered: dict[str, list[Any]] = {}
        self.discovered = False
        self._offered = 0

    # -- the four hooks -------------------------------------------------------------------------
    def discover(self, runner: Runner) -> None:
        """Once per run: call each listing tool with ``{}`` (when the schema accepts it) as a go case."""
        if self.discovered or self.learner is None:
            return
        self.discovered = True
        from feeler.generate import Case, compile_schema

        for tool in listings(runner.tools()):
            if runner.skip_reason(tool) or not compile_schema(tool.input_schema).is_valid({}):
                continue
            runner.progress(f"{tool.name}: discovery (no arguments)")
            runner._call_case(tool, runner.stats(tool), Case("go", None, "$", "", {}, None, "boundary", "discovery"))

    def offer(self, tool: Tool, case: Any) -> Any:
        """*case* with the pool's values put in where the oracle agrees; learned ones named in ``note``."""
        if not len(self.pool) or getattr(case, "kind", None) != "go":
            return case
        self._offered += 1
        new = with_values(tool.input_schema, tool.name, case, self.pool, pick=self._offered)
        if new is case or case_source(new) != "learned":
            return new
        return dataclasses.replace(new, note=_provenance(self.pool, tool.name, case.arguments, new.arguments))

    def after_call(self, tool: Tool, case: Any, ctx: CallContext, stats: Any) -> None:
        """Learn from a successful answer; count go cases by source (and learned ones by provenance)."""
        ex = ctx.exchange
        entered = ex is not None and isinstance(ex.result, dict) and not ex.is_error_result and ex.error is None
        if getattr(case, "kind", None) == "go":
            source = case_source(case)
            counts = stats.go_by_source.setdefault(source, {"calls": 0, "entered": 0})
            counts["calls"] += 1
            if entered:
                counts["entered"] += 1
                if source == "learned" and getattr(case, "note", ""):
                    for where in case.note.split("; "):
                        stats.learned_from[where] = stats.learned_from.get(where, 0) + 1
                bases = self.entered.setdefault(tool.name, [])
                if len(bases) < _BASES_PER_TOOL and case.arguments not in bases:
                    bases.append(case.arguments)
        if entered and self.learner is not None:
            self.learner.learn(tool.name, ex.result)  # type: ignore[union-attr]

    def chains(self, runner: Runner, *, runs: int, steps: int) -> list[Finding]:
        """The chain phase over the tools that may be called; returns the chain findings."""
        from feeler.check.findings import Finding
        from feeler.generate import go_cases
        from feeler.world.chains import run_chains

        tools, bases = [], {}
        for tool in runner.tools():
            stats = runner.stats(tool)
            if runner.skip_reason(tool) or stats.schema_problem or stats.timeouts >= runner.options.max_timeouts_per_tool:
                continue
            known = list(self.entered.get(tool.name, []))
            if not known:
                for case in go_cases(tool.input_schema, seed=runner.options.seed)[:_BASES_PER_TOOL]:
                    offered = self.offer(tool, case)
                    if offered.arguments not in known:
                        known.append(offered.arguments)
            known.sort(key=lambda a: len(json.dumps(a, ensure_ascii=False, default=str)))  # shrinks to the smallest
            if known and isinstance(known[0], dict):
                tools.append(tool)
                bases[tool.name] = known
        runner.progress("chains: " + ", ".join(t.name for t in tools))
        out = []
        for failure in run_chains(runner, tools, bases, runs=runs, steps=steps, shrink=runner.options.shrink):
            last = failure.steps[-1]
            ex = failure.ctx.exchange
            answers = [f.text for f in ex.frames if f.direction == "in"] if ex is not None else []
            finding = Finding(
                check=failure.check, severity=failure.problem.severity or "error", tool=last.tool, kind="chain",
                message=failure.problem.message, error_class=failure.problem.error_class,
                path=getattr(failure.ctx.case, "path", None) or None, arguments=last.arguments,
                revision=runner.revision, request_text=ex.request_text if ex is not None else None,
                answer_text=answers[-1] if answers else None,
                extra={"sequence": [s.to_json() for s in failure.steps]},
            )  # fmt: skip
            if runner.report.findings.add(finding):
                runner.progress(f"  {finding.severity}: [{finding.check}] {finding.tool} {finding.message}")
            out.append(finding)
        return out


def _provenance(pool: ValuePool, tool: str, before: Any, after: Any) -> str:
    """Where the learned values that changed *before* into *after* came from ("; "-joined)."""
    out: list[str] = []

    def visit(old: Any, new: Any, pointer: str, name: str | None) -> None:
        if isinstance(new, dict):
            for key, sub in new.items():
                esc = str(key).replace("~", "~0").replace("/", "~1")
                visit(old.get(key) if isinstance(old, dict) else None, sub, f"{pointer}/{esc}", str(key))
        elif new != old or type(new) is not type(old):
            for value in pool.values_for(tool, pointer, name):
                if value.value == new and value.source == "learned":
                    out.append(value.provenance)
                    return

    visit(before, after, "", None)
    return "; ".join(dict.fromkeys(out))

