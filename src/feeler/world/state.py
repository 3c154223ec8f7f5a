"""The world of one run: the value pool, what was learned from answers, and the chain phase.

The runner holds one :class:`World` and calls it at four points (nothing else in the runner knows
about learning or chains):

* :meth:`World.discover` once, before the first go case: the discovery pass calls the read-only tools
  that need no arguments (:func:`feeler.world.learn.listings`) so their answers seed the pool;
* :meth:`World.after_call` after each call: a successful answer is learned from (the runner's go
  cases then get learned values like known ones, through :func:`feeler.world.apply.with_values`), and
  an entered go case that carried learned values is counted by their provenance;
* :meth:`World.chains` once at the end: the chain phase (:mod:`feeler.world.chains`).
"""

from __future__ import annotations

import json
from collections.abc import Iterable
from typing import TYPE_CHECKING, Any

from feeler.catalog import Tool
from feeler.world.anchor import outcome
from feeler.world.apply import CASE_SOURCES, case_source, with_values
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
        self.discovered = False

    def takes_learned(self, tool: str) -> bool:
        """Whether values learned from answers may go into *tool*'s arguments (identifier, path or name
        inputs, with learning on)."""
        return self.learner is not None and self.learner.takes(tool)

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
            runner._call_case(tool, runner.stats(tool), Case("go", None, "$", "", {}, None, "schema", "discovery"))

    def after_call(self, tool: Tool, case: Any, ctx: CallContext, stats: Any) -> None:
        """Learn from a successful answer; count entered go cases by the provenance of learned values."""
        ex = ctx.exchange
        if self.learner is None or outcome(ex, ctx.failure) != "entered":
            return
        if getattr(case, "kind", None) == "go" and case_source(case) == "learned":
            for where in _provenance(self.pool, tool.name, case.arguments):
                stats.learned_from[where] = stats.learned_from.get(where, 0) + 1
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
            entered = stats.world.entered
            known = list(entered[:: max(1, len(entered) // _BASES_PER_TOOL)][:_BASES_PER_TOOL])  # spread: variety
            if not known:
                # No go case of this tool ran in this process (a pytest-xdist worker got only the chains
                # item): call a few go cases first and keep those that entered as the bases.
                ts = runner.schema(tool)
                for pick, case in enumerate(go_cases(ts, seed=runner.options.sample_seed)[:_BASES_PER_TOOL]):
                    offered = with_values(ts, tool.name, case, self.pool, pick=pick, sources=CASE_SOURCES)
                    if not runner._call_case(tool, stats, offered):
                        break
                known = list(stats.world.entered[:_BASES_PER_TOOL])
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
            red = runner.redactor  # secrets never reach a report or a replay file (feeler.redact)
            finding = Finding(
                check=failure.check, severity=failure.problem.severity or "error", tool=last.tool, kind="chain", source="chain",
                message=red.text(failure.problem.message), error_class=failure.problem.error_class,
                path=getattr(failure.ctx.case, "path", None) or None, arguments=red.json(last.arguments),
                revision=runner.revision, request_text=red.text(ex.request_text) if ex is not None else None,
                answer_text=red.text(answers[-1]) if answers else None,
                extra={"sequence": [s.to_json() for s in failure.steps], "selfContained": failure.contained},
            )  # fmt: skip
            if not failure.contained:  # said once, in words, where the maintainer reads the finding
                finding.message += " (the sequence uses identifiers it did not create: replay it on the same server state)"
            if runner.report.findings.add(finding):
                runner.progress(f"  {finding.severity}: [{finding.check}] {finding.tool} {finding.message}")
            out.append(finding)
        return out


def _provenance(pool: ValuePool, tool: str, arguments: Any) -> list[str]:
    """Where the learned values in *arguments* came from (their provenance in the pool)."""
    out: list[str] = []

    def visit(node: Any, pointer: str, name: str | None) -> None:
        if isinstance(node, dict):
            for key, sub in node.items():
                visit(sub, f"{pointer}/{str(key).replace('~', '~0').replace('/', '~1')}", str(key))
        elif isinstance(node, list):
            for index, sub in enumerate(node[:50]):
                visit(sub, f"{pointer}/{index}", name)
        else:
            for value in pool.values_for(tool, pointer, name):
                if value.source == "learned" and value.value == node and type(value.value) is type(node):
                    out.append(value.provenance)
                    return

    visit(arguments, "", None)
    return list(dict.fromkeys(out))
