"""Learned values and call chains through the pytest plugin (pytester projects, as pytest tests its plugins).

Real servers, started as subprocesses: tests/servers/reads_under_listed_roots.py and
tests/servers/records_lost_on_update.py (official SDK). Chains are hypothesis' stateful testing
(hypothesis documentation, "Stateful tests": rule-based state machines, bundles, shrinking of the failing
sequence; URL https://hypothesis.readthedocs.io/en/latest/stateful.html from memory). With
``-n 2`` (pytest-xdist) each worker opens its own session and learns on its own.
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


def _project(pytester: pytest.Pytester, server: str, extra: str = "") -> None:
    command = f"{sys.executable} {ROOT / 'tests' / 'servers' / server}"
    pytester.makefile(".toml", pyproject=f"""
        [tool.feeler]
        targets = {{ world = {command!r} }}
        samples = 3
        replay_dir = "replays"
        {extra}
        """)  # fmt: skip


def _failed(result: pytest.RunResult) -> set[str]:
    return {line.split("::")[-1].split(" ")[0] for line in result.outlines if line.startswith("FAILED")}


def test_listed_roots_open_the_read_tools_on_two_workers(pytester: pytest.Pytester) -> None:
    pytest.importorskip("xdist")
    _project(pytester, "reads_under_listed_roots.py")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-rf", "-n", "2")
    # Each worker's discovery pass calls list_roots, so read_text and stat_path enter (no values_needed hint).
    assert _failed(result) == set(), result.outlines
    assert result.parseoutcomes().get("passed", 0) >= 4
    # Without learning every read go case is refused with one message: the values_needed hint fails them.
    _project(pytester, "reads_under_listed_roots.py", "learn = false\nchain_runs = 0")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-rf", "-k", "read_text and go and not no")
    assert _failed(result) == {"read_text[go]"} and any("[values_needed]" in line for line in result.outlines)


@pytest.mark.parametrize(
    "workers", [pytest.param([], marks=pytest.mark.slow), ["-n", "2"]], ids=["one-process", "two-workers"]
)
def test_read_your_writes_defect_fails_the_chains_item(pytester: pytest.Pytester, workers: list[str]) -> None:
    if workers:
        pytest.importorskip("xdist")
    _project(pytester, "records_lost_on_update.py")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-rf", *workers)
    assert _failed(result) == {"chains"}, result.outlines
    assert any("[read_your_writes]" in line for line in result.outlines)
    import json

    replays = [json.loads(p.read_text(encoding="utf-8")) for p in (pytester.path / "replays").rglob("*.replay.json")]
    assert any(r.get("sequence") and r["finding"]["check"] == "read_your_writes" for r in replays), "no chain replay file"
