"""go_enters, bounds_honoured, nogo_stops, gate_opens and no_crash against real servers.

References: MCP 2025-11-25 server/tools "Error Handling" (bad arguments: a tool execution error with
``isError: true``; before 2025-11-25 a -32602 protocol error; PROTOCOL.md section 5.4: accept both, never a
success); JSON-RPC 2.0 section 5.1 (-32602 invalid params, -32603 internal error); JSON Schema 2020-12
validation section 6.2.2 ("maximum": inclusive) with ``jsonschema`` deciding what is valid.
"""

from __future__ import annotations

import pytest
from check_helpers import classes, faulty, run_checks, script, sig

from feeler.check.registry import CheckSettings


# -- go_enters (MCP 2025-11-25 server/tools error handling; JSON-RPC 2.0 section 5.1) ------------


def test_go_enters_clean_server() -> None:
    report = run_checks(faulty("clean"), ["go_enters"], settings=CheckSettings(strict_go=True))
    stats = report.tools["echo"]
    assert stats.go_calls > 0 and stats.go_entered == stats.go_calls
    assert not list(report.findings)


@pytest.mark.parametrize(
    ("fault", "error_class"),
    [
        ("refuses-valid", "refused-valid"),  # -32602 on schema-valid arguments: schema and code disagree
        ("go-internal", "internal-error"),  # -32603 on schema-valid arguments (JSON-RPC 2.0 section 5.1)
    ],
)
def test_go_enters_finds_refused_valid_arguments(fault: str, error_class: str) -> None:
    report = run_checks(faulty(fault), ["go_enters"], samples=1)
    assert classes(report, "go_enters") == {error_class}
    # go cases: keyword and path stay out of the signature, so one defect is one finding.
    assert [sig(f) for f in report.findings] == [("go_enters", "echo", None, None, error_class)]


def test_go_enters_counts_is_error_and_flags_it_only_when_strict() -> None:
    lenient = run_checks(faulty("always-is-error"), ["go_enters"], samples=1)
    assert lenient.tools["echo"].go_is_error == lenient.tools["echo"].go_calls > 0
    assert not list(lenient.findings)
    strict = run_checks(faulty("always-is-error"), ["go_enters"], samples=1, settings=CheckSettings(strict_go=True))
    assert classes(strict, "go_enters") == {"is-error"}


def test_a_go_case_the_oracle_refuses_gives_no_finding(monkeypatch: pytest.MonkeyPatch) -> None:
    """Sampled go cases are valid by construction and only audited by the oracle (feeler.generate
    fast_go_cases), so the runner proves a go case before a finding from it is recorded. Here the fast
    sampler is replaced by one that breaks the schema (``text`` must be a string: JSON Schema 2020-12
    validation 6.1.1, jsonschema deciding): the clean server rightly answers isError (MCP 2025-11-25
    server/tools error handling), which strict_go would report on a real go case. No finding; the cases
    are counted as refuted and the bug is said once."""
    import feeler.generate
    from feeler.check.runner import HYPOTHESIS_SAMPLES
    from feeler.generate import Case, GeneratorBugWarning

    def wrong(schema, count, *, seed=0, recursion_depth=None):  # noqa: ANN001, ANN202 - fast_go_cases' signature
        return [Case("go", None, "$", "", {"text": n}, None, "sampled", "sampled") for n in range(count)]

    monkeypatch.setattr(feeler.generate, "fast_go_cases", wrong)
    with pytest.warns(GeneratorBugWarning, match="its own oracle refuses") as said:
        report = run_checks(faulty("clean"), ["go_enters"], samples=HYPOTHESIS_SAMPLES + 5, settings=CheckSettings(strict_go=True))
    stats = report.tools["echo"]
    assert stats.refuted_go == 5 and stats.go_is_error >= 5 and len(said) == 1
    assert not list(report.findings)
    # The same calls with valid arguments refused by isError are a finding under strict_go (the check works).
    right = run_checks(faulty("always-is-error"), ["go_enters"], samples=1, settings=CheckSettings(strict_go=True))
    assert classes(right, "go_enters") == {"is-error"} and right.tools["echo"].refuted_go == 0


# -- gate_opens (common practice: a tool that refuses every valid input is broken) ------------


def test_gate_opens_finds_a_tool_that_refuses_everything() -> None:
    report = run_checks(faulty("always-is-error"), ["gate_opens"], samples=1)
    assert [sig(f) for f in report.findings] == [("gate_opens", "echo", None, None, "rejects-all")]
    assert report.findings.errors()[0].kind == "tool"


def test_gate_opens_clean_server() -> None:
    report = run_checks(faulty("clean"), ["gate_opens"], samples=1)
    assert report.tools["echo"].go_entered > 0
    assert not list(report.findings)


# -- bounds_honoured (JSON Schema 2020-12 validation 6.2.2: "maximum" is inclusive) -----------------


def test_bounds_honoured_finds_the_off_by_one() -> None:
    report = run_checks(faulty("off-by-one"), ["bounds_honoured"], samples=0)
    assert [sig(f) for f in report.findings] == [("bounds_honoured", "count", None, None, "bound:maximum")]
    finding = report.findings.errors()[0]
    assert finding.arguments == {"count": 10} and finding.keyword == "maximum"


def test_bounds_honoured_clean_server() -> None:
    report = run_checks(faulty("bounded"), ["bounds_honoured"], samples=0)
    assert report.tools["count"].go_entered >= 2  # both bounds (1 and 10) were called and accepted
    assert not list(report.findings)


# -- nogo_stops (MCP 2025-11-25 server/tools; JSON-RPC 2.0 section 5.1) --------------------------


@pytest.mark.parametrize("fault", ["clean", "nogo-protocol"])
def test_nogo_stops_clean_servers(fault: str) -> None:
    # isError (2025-11-25 style) and -32602 (earlier style) are both clean rejections (PROTOCOL.md 5.4).
    report = run_checks(faulty(fault), ["nogo_stops"], samples=0)
    stats = report.tools["echo"]
    assert stats.nogo_calls > 0 and stats.nogo_entered == 0
    assert not list(report.findings)
    style = stats.rejection_style(report.revision)
    assert ("-32602 protocol errors" in style) == (fault == "nogo-protocol")


def test_nogo_stops_names_each_unenforced_keyword() -> None:
    report = run_checks(faulty("accepts-anything"), ["nogo_stops"], samples=0)
    # The echo schema: {"text": string, maxLength 1000}, required, additionalProperties false.
    assert {sig(f) for f in report.findings} == {
        ("nogo_stops", "echo", "additionalProperties", "", "accepted-invalid"),
        ("nogo_stops", "echo", "maxLength", "/text", "accepted-invalid"),
        ("nogo_stops", "echo", "required", "", "accepted-invalid"),
        ("nogo_stops", "echo", "type", "/text", "accepted-invalid"),
    }
    assert all("does not enforce" in f.message for f in report.findings)


@pytest.mark.parametrize(
    ("fault", "error_class"),
    [
        ("nogo-internal", "internal-error"),  # JSON-RPC 2.0 section 5.1: -32603 is not a clean rejection
        ("nogo-wrong-code", "wrong-code"),  # -32000 is neither -32602 nor isError
    ],
)
def test_nogo_stops_finds_unclean_rejections(fault: str, error_class: str) -> None:
    report = run_checks(faulty(fault), ["nogo_stops"], samples=0)
    assert classes(report, "nogo_stops") == {error_class}
    assert all(f.kind == "no-go" and f.keyword for f in report.findings)


# -- no_crash (common practice: a tool reports failures, it does not crash) -------------------------


def test_no_crash_clean_server() -> None:
    report = run_checks(faulty("clean"), ["no_crash"])
    assert report.tools["echo"].go_calls > 0 and report.restarts == 0
    assert not list(report.findings)


def test_no_crash_finds_an_exception_name() -> None:
    report = run_checks(faulty("exception-name"), ["no_crash"], samples=1)
    assert classes(report, "no_crash") == {"unhandled:KeyError"}


def test_no_crash_finds_a_server_that_exits() -> None:
    report = run_checks(script("crashes_on_call.py"), ["no_crash"], samples=1, max_restarts=1)
    assert "ServerExited" in classes(report, "no_crash")
    assert report.restarts == 1  # it restarted once, then gave up on the tool


def test_no_crash_finds_a_hang() -> None:
    report = run_checks(script("hangs_on_call.py"), ["no_crash"], samples=1, timeout=0.5)
    assert classes(report, "no_crash") == {"RequestTimeout"}
    assert report.tools["echo"].timeouts == 2  # max_timeouts_per_tool: then the tool is not called again
