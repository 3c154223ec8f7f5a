"""The trust heuristics against a corpus of our own answers (both counts printed), and against real SDK
servers: a crash inside an SDK tool becomes an isError result "Error executing tool NAME" (the official
Python SDK, ``mcp.server.mcpserver.tools.base.Tool.run``), and a failure returned as a success result.

References: MCP 2025-11-25 server/tools (error handling: tool execution errors are reported in the result
with ``isError: true``); common practice for the wording of failures.
"""

from __future__ import annotations

import json
from pathlib import Path

from check_helpers import run_checks, script

from feeler.check.trust import crash_reason, failure_reason

CORPUS = json.loads((Path(__file__).parent / "corpus" / "answers.json").read_text(encoding="utf-8"))


def test_crash_heuristic_on_the_corpus() -> None:
    """Every crash sample is flagged, no clean refusal is (common practice: a refusal names the rule)."""
    flagged = [t for t in CORPUS["crash"] if crash_reason(t)]
    false = [t for t in CORPUS["clean"] if crash_reason(t)]
    print(f"\ncrash heuristic: {len(flagged)}/{len(CORPUS['crash'])} crash samples flagged, "
          f"{len(false)}/{len(CORPUS['clean'])} clean refusals flagged")
    assert flagged == CORPUS["crash"]
    assert false == []


def test_failure_heuristic_on_the_corpus() -> None:
    """Every failure-as-success sample is flagged, no real success is (common practice)."""
    flagged = [t for t in CORPUS["failure"] if failure_reason(t)]
    false = [t for t in CORPUS["success"] if failure_reason(t)]
    print(f"\nfailure heuristic: {len(flagged)}/{len(CORPUS['failure'])} failure samples flagged, "
          f"{len(false)}/{len(CORPUS['success'])} successes flagged")
    assert flagged == CORPUS["failure"]
    assert false == []


def test_sdk_crash_is_no_crash_without_strict_and_failure_as_success_warns() -> None:
    """The SDK hides the crash's text: "Error executing tool find_berths" alone is a no_crash error on a go
    case (no strict go needed); "Error: no such table" as a success result is a failure_as_success warning."""
    report = run_checks(script("hides_failures.py"), ["no_crash", "failure_as_success"], samples=30, timeout=60)
    by = {(f.check, f.tool): f for f in report.findings}
    crash = by[("no_crash", "find_berths")]
    assert crash.severity == "error" and crash.error_class == "sdk-crash" and crash.kind == "go"
    hidden = by[("failure_as_success", "tide_log")]
    assert hidden.severity == "warning" and "no such table" in hidden.message
    assert ("no_crash", "tide_log") not in by and ("failure_as_success", "find_berths") not in by
