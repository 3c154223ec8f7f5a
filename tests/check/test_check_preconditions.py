"""Each check's ``when`` (register(..., when=...)) is a necessary condition: on every real call where it is
false, the check itself finds nothing.

The runner skips a check whose ``when`` is false, which keeps the ten or so checks of each call cheap on
a clean answer; a ``when`` that is wrong would silently turn a check off. So every call of real runs
against servers that break the rules (tests/check/servers/faulty.py: errors, isError results, crashes,
leaks, output schemas, bounds, slow answers) is judged twice, with and without the gate. References:
the checks' own (JSON-RPC 2.0 section 5; MCP 2025-11-25 server/tools; MCP 2025-06-18 output schema).
"""

from __future__ import annotations

from typing import Any

from check_helpers import faulty

from feeler.check.registry import CHECKS, CallContext, CheckSettings
from feeler.check.runner import RunOptions, Runner

#: servers whose calls between them make every gated check find something
SERVERS: list[tuple[tuple[str, ...], dict[str, Any]]] = [
    (("clean",), {}),
    (("accepts-anything",), {}),
    (("refuses-valid",), {}),
    (("go-internal",), {}),
    (("always-is-error",), {"settings": CheckSettings(strict_go=True)}),
    (("exception-name",), {}),
    (("off-by-one",), {}),
    (("leaky", "python"), {}),
    (("leaky", "path"), {}),
    (("output-ok",), {}),
    (("output-invalid",), {}),
    (("output-unmirrored",), {}),
    (("output-missing",), {}),
    (("nogo-internal",), {}),
    (("result-and-error",), {}),
    (("slow",), {"settings": CheckSettings(latency_budget={"*": 0.05})}),
]


def _contexts() -> list[CallContext]:
    seen: list[CallContext] = []

    class Recording(Runner):
        def _evaluate(self, ctx: CallContext, only: tuple[str, ...] | None = None) -> list[str]:
            seen.append(ctx)
            return super()._evaluate(ctx, only)

    for fault, extra in SERVERS:
        options = RunOptions(samples=4, probes=True, replay_dir=None, chain_runs=0, **extra)
        Recording(faulty(*fault), options, session_options={"timeout": 5.0}).run()
    return seen


def test_a_check_whose_precondition_is_false_finds_nothing() -> None:
    gated = [c for c in CHECKS.values() if c.when is not None]
    assert {c.name for c in gated} >= {"go_enters", "no_crash", "no_leaks", "output_schema", "latency"}
    contexts = _contexts()
    assert len(contexts) > 200
    found_when_open: dict[str, int] = {c.name: 0 for c in gated}
    for ctx in contexts:
        for check in gated:
            if ctx.kind not in check.applies_to:
                continue
            problems = list(check.func(ctx))  # the check itself, without its gate
            if check.when(ctx):  # type: ignore[misc]
                found_when_open[check.name] += bool(problems)
            else:
                assert not problems, (check.name, ctx.kind, ctx.exchange and ctx.exchange.response, problems)
    # The runs reach the other side too: each gated check found something where its gate was open.
    assert all(found_when_open.values()), found_when_open
