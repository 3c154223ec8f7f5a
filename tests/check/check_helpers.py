"""Shared helpers for the check tests: start a faulty server, run chosen checks, read signatures.

Servers run as real subprocesses (``tests/check/servers/faulty.py FAULT`` and ``tests/servers/*.py``);
the Runner owns the process and ends it when the run closes its session.
"""

from __future__ import annotations

import json
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import Any

TESTS = Path(__file__).resolve().parents[1]
if str(TESTS) not in sys.path:
    sys.path.insert(0, str(TESTS))  # demo_defects.py and the tests/servers scripts live there

from feeler.check.registry import CheckSettings  # noqa: E402
from feeler.check.runner import RunOptions, Runner, RunReport  # noqa: E402
from feeler.target import Target  # noqa: E402

FAULTY = Path(__file__).resolve().parent / "servers" / "faulty.py"
SERVERS = TESTS / "servers"
PY = sys.executable


def faulty(fault: str, *extra: str, env: dict[str, str] | None = None) -> Target:
    """The stdio target of one faulty server."""
    return Target(kind="stdio", command=(PY, str(FAULTY), fault, *extra), env=dict(env or {}))


def script(name: str) -> Target:
    """The stdio target of a server in tests/servers."""
    return Target(kind="stdio", command=(PY, str(SERVERS / name)))


def run_checks(
    target: Target,
    checks: Sequence[str],
    *,
    timeout: float = 5.0,
    revision: str | None = None,
    settings: CheckSettings | None = None,
    **options: Any,
) -> RunReport:
    """Run only *checks* against *target* with few cases (no probes unless asked, no replay files)."""
    opts = RunOptions(
        checks=list(checks),
        samples=options.pop("samples", 3),
        probes=options.pop("probes", False),
        replay_dir=options.pop("replay_dir", None),
        settings=settings or CheckSettings(),
        **options,
    )
    return Runner(target, opts, session_options={"timeout": timeout, "revision": revision}).run()


def sig(finding: Any) -> tuple[Any, ...]:
    """(check, tool, keyword, path, error class) of a Finding or of a --format json finding dict."""
    if isinstance(finding, dict):
        return tuple(finding["signature"].split("|")[:1]) + tuple(
            None if part == "None" else part for part in finding["signature"].split("|")[1:]
        )
    return (finding.check, finding.tool, *(None if p == "None" else p for p in finding.signature.split("|")[2:]))


def classes(report: RunReport, check: str) -> set[str]:
    """The error classes of *check*'s findings in *report*."""
    return {f.error_class for f in report.findings if f.check == check}


def run_cli(args: Sequence[str]) -> tuple[int, str, str]:
    """Run ``feeler ARGS`` in this process (the real command line); return exit code, stdout, stderr."""
    import io
    from contextlib import redirect_stderr, redirect_stdout

    from feeler.cli import run

    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = run(list(args))
    return code, out.getvalue(), err.getvalue()


def cli_json(args: Sequence[str]) -> tuple[int, dict[str, Any]]:
    """``feeler check --format json ARGS``: the exit code and the parsed report."""
    code, out, err = run_cli(["check", "--format", "json", *args])
    assert out.strip(), f"no JSON on stdout (exit {code}); stderr: {err[-2000:]}"
    return code, json.loads(out)
