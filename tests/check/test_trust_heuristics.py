"""The trust heuristics against corpora of our own answers and paths (both counts printed), and against
real SDK servers: a crash inside an SDK tool becomes an isError result "Error executing tool NAME" (the
official Python SDK, ``mcp.server.mcpserver.tools.base.Tool.run``: an unexpected exception keeps only the
prefix, a deliberate ``ToolError`` keeps its text after it), and a failure returned as a success result.

References: MCP 2025-11-25 server/tools (error handling: tool execution errors are reported in the result
with ``isError: true``); CPython 3.11 (the exception texts raised again below); common practice for the
wording of failures and for which paths a user already knows.
"""

from __future__ import annotations

import json
from pathlib import Path

from check_helpers import run_checks, script

import pytest

from feeler.check.trust import crash_reason, failure_reason, leaked_path

CORPUS = json.loads((Path(__file__).parent / "corpus" / "answers.json").read_text(encoding="utf-8"))
PATHS = json.loads((Path(__file__).parent / "corpus" / "paths.json").read_text(encoding="utf-8"))


def test_crash_heuristic_on_the_corpus() -> None:
    """Every crash sample is flagged, no clean refusal is (common practice: a refusal names the rule)."""
    flagged = [t for t in CORPUS["crash"] if crash_reason(t)]
    false = [t for t in CORPUS["clean"] if crash_reason(t)]
    print(f"\ncrash heuristic: {len(flagged)}/{len(CORPUS['crash'])} crash samples flagged, "
          f"{len(false)}/{len(CORPUS['clean'])} clean refusals flagged")
    assert flagged == CORPUS["crash"]
    assert false == []


# Programming errors as CPython 3.11 words them (raised here, so the texts are the interpreter's own, not
# remembered): older SDKs and hand-written servers pass str(exception) on after the tool's name.
_PYTHON_CRASHES = [
    lambda: __import__("re").compile("["),
    lambda: None.code,  # type: ignore[attr-defined]
    lambda: {}["berth"],
    lambda: [][1],
    lambda: 1 / 0,
    lambda: 1 + "a",  # type: ignore[operator]
    lambda: int("twelve"),
    lambda: float("x"),
    lambda: __import__("json").loads(""),
    lambda: [None][0][0],  # type: ignore[index]
    lambda: (lambda nights: nights)(),  # type: ignore[call-arg]
    lambda: sorted([1, "a"]),  # type: ignore[list-item]
    lambda: __import__("importlib").import_module("feeler_no_such_module"),
]


@pytest.mark.parametrize("raise_it", _PYTHON_CRASHES)
def test_crash_heuristic_reads_the_interpreters_own_text(raise_it) -> None:  # type: ignore[no-untyped-def]
    """The SDK's prefix followed by str(exception) of a real CPython error reads as a crash (no class name)."""
    with pytest.raises(Exception) as caught:
        raise_it()
    text = f"Error executing tool book_berth: {caught.value}"
    assert crash_reason(text) == "exception-text", text


def test_failure_heuristic_on_the_corpus() -> None:
    """Every failure-as-success sample is flagged, no real success is, and no success whose failure wording
    repeats a value the caller sent (common practice)."""
    flagged = [t for t in CORPUS["failure"] if failure_reason(t)]
    false = [t for t in CORPUS["success"] if failure_reason(t)]
    echoes = [e for e in CORPUS["echo"] if failure_reason(e["text"], e["arguments"])]
    print(f"\nfailure heuristic: {len(flagged)}/{len(CORPUS['failure'])} failure samples flagged, "
          f"{len(false) + len(echoes)}/{len(CORPUS['success']) + len(CORPUS['echo'])} successes flagged "
          f"({len(CORPUS['echo'])} of them echo a value sent)")
    assert flagged == CORPUS["failure"]
    assert false == [] and echoes == []
    assert all(failure_reason(e["text"]) for e in CORPUS["echo"])  # without the arguments they would read as failures


def test_given_path_heuristic_on_the_corpus() -> None:
    """A path the user gave (a folder of the command line or working folder, the resolved form of a value
    sent) is not a leak; any other absolute path is, and the first such path is the one named."""
    false = [s["text"] for s in PATHS["given"] if leaked_path(s["text"], tuple(s["given"]), s["arguments"])]
    found = [s["text"] for s in PATHS["leaked"] if leaked_path(s["text"], tuple(s["given"]), s["arguments"]) == s["leak"]]
    print(f"\ngiven-path heuristic: {len(found)}/{len(PATHS['leaked'])} leaks found, "
          f"{len(false)}/{len(PATHS['given'])} given paths flagged")
    assert false == []
    assert found == [s["text"] for s in PATHS["leaked"]]


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


def test_a_sent_value_holding_nul_is_compared_without_touching_the_file_system() -> None:
    """A string argument may hold U+0000 (JSON allows it, RFC 8259 section 7); no file name can, so it is
    never resolved on disk (os.path.realpath raises on it): found by feeler's own tricky strings."""
    text = "cannot open /srv/harbour/app/berths.py: no such file"
    assert leaked_path(text, (), {"path": "/srv/harbour\x00/x"}) == "/srv/harbour/app/berths.py"
    assert leaked_path(text, (), {"path": "/srv/harbour/app/berths.py"}) is None
