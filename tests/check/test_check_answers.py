"""no_leaks, output_schema, output_mirrored, server_alive and latency against real servers.

References: MCP 2025-11-25 server/tools "Security Considerations" (servers MUST sanitize tool outputs; no
internals in errors — with OWASP error-handling guidance as common practice); MCP 2025-06-18 server/tools
"Output Schema" (structuredContent MUST conform; a text block SHOULD carry the serialized JSON), validated
with ``jsonschema`` (JSON Schema 2020-12); MCP 2025-11-25 basic/utilities/ping (ping answered promptly
with an empty result); latency budgets are common practice.
"""

from __future__ import annotations

import pytest
from check_helpers import SERVERS, PY, classes, faulty, run_checks, sig

from feeler.check.registry import CheckSettings
from feeler.target import Target

# -- no_leaks ------------------------------------------------------------------------------------


def test_no_leaks_clean_server() -> None:
    report = run_checks(faulty("clean"), ["no_leaks"], samples=0)
    assert report.tools["echo"].nogo_stopped_is_error > 0  # error texts were looked at
    assert not list(report.findings)


@pytest.mark.parametrize(
    ("kind", "error_class"),
    [
        ("python", "python-traceback"),
        ("javascript", "javascript-stack"),
        ("java", "java-stack"),
        ("go", "go-panic"),
        ("path", "absolute-path"),
    ],
)
def test_no_leaks_finds_internals(kind: str, error_class: str) -> None:
    report = run_checks(faulty("leaky", kind), ["no_leaks"], samples=0)
    assert error_class in classes(report, "no_leaks")
    assert all(f.kind == "no-go" for f in report.findings)


def test_no_leaks_finds_a_secret_from_the_environment() -> None:
    # The server reads the secret from its environment; feeler knows it because the variable name looks secret.
    secret = "sk-feeler-test-0123456789"
    report = run_checks(faulty("leaky", "secret", env={"FEELER_TEST_API_KEY": secret}), ["no_leaks"], samples=0)
    assert classes(report, "no_leaks") == {"secret"}
    assert all(secret not in f.message for f in report.findings)  # the finding itself must not repeat it


# -- output_schema / output_mirrored ---------------------------------------------------------------


@pytest.mark.parametrize(
    ("fault", "error_class"),
    [
        ("output-missing", "missing"),  # outputSchema declared, no structuredContent
        ("output-invalid", "invalid:type"),  # "length" is a string where the schema says integer
    ],
)
def test_output_schema_finds_broken_structured_content(fault: str, error_class: str) -> None:
    report = run_checks(faulty(fault), ["output_schema"], samples=2)
    assert [sig(f) for f in report.findings] == [("output_schema", "shout", None, None, error_class)]


def test_output_schema_clean_servers() -> None:
    report = run_checks(faulty("output-ok"), ["output_schema", "output_mirrored"], samples=2)
    assert report.tools["shout"].go_entered > 0
    assert not list(report.findings)


def test_output_schema_clean_sdk_server() -> None:
    # The SDK reference server: four tools with outputSchemas, all conforming and mirrored.
    target = Target(kind="stdio", command=(PY, str(SERVERS / "clean_reference.py")))
    report = run_checks(target, ["output_schema", "output_mirrored"], samples=1)
    assert sum(s.go_entered for s in report.tools.values()) > 4
    assert not list(report.findings)


@pytest.mark.parametrize(
    ("schema", "check", "error_class", "says"),
    [
        # refused up front by the same shape check as input patterns (feeler.generate._ecma.check)
        ("nested-repeat", "output_schema_valid", "output-slow-pattern", "nests an open-ended repeat"),
        ("ambiguous-repeat", "output_schema_valid", "output-slow-pattern", "repeats alternatives that can match the same text"),
        # passes the shape check; the regex engine's time budget ends the match (feeler.generate._ecma.search)
        ("chained-alternatives", "output_schema", "slow-pattern", "took over 2s"),
        # feeler._limits.MAX_DEPTH, applied before the meta-schema check recurses into it
        ("deep", "output_schema_valid", "output-over-limit", "nests more than 64 levels deep"),
    ],
)
def test_a_hostile_output_schema_is_a_finding_not_a_hang(schema: str, check: str, error_class: str, says: str) -> None:
    """JSON Schema 2020-12 validation 6.3.3 (pattern) and core 6.4 (ECMA-262); issue 13: limits and a time budget."""
    report = run_checks(faulty("output-hostile", schema), ["output_schema", "output_schema_valid"], samples=0)
    found = [f for f in report.findings if f.check == check]
    assert [f.error_class for f in found] == [error_class], [(f.check, f.message) for f in report.findings]
    assert says in found[0].message
    if check == "output_schema_valid":  # no validator for a refused schema: no second finding per call
        assert not [f for f in report.findings if f.check == "output_schema"]


def test_output_patterns_are_read_the_ecma_way() -> None:
    """ECMA-262 22.2.2.6: ``$`` matches only at the very end (Python's ``re`` also matches before a final
    newline), as JSON Schema 2020-12 core 6.4 asks: ``SHOUT\\n`` breaks ``^[A-Z]+$``."""
    report = run_checks(faulty("output-hostile", "dollar"), ["output_schema"], samples=0)
    assert [sig(f) for f in report.findings] == [("output_schema", "shout", None, None, "invalid:pattern")]


def test_output_mirrored_is_a_warning() -> None:
    report = run_checks(faulty("output-unmirrored"), ["output_schema", "output_mirrored"], samples=2)
    assert [(sig(f), f.severity) for f in report.findings] == [(("output_mirrored", "shout", None, None, "not-mirrored"), "warning")]
    assert report.exit_code() == 0  # a SHOULD: warnings do not fail the run


# -- server_alive ------------------------------------------------------------------------------------


@pytest.mark.parametrize("revision", ["2025-11-25", "2026-07-28"])
def test_server_alive_clean_server(revision: str) -> None:
    report = run_checks(faulty("clean"), ["server_alive"], samples=1, revision=revision)
    assert report.tools["echo"].go_calls > 0 and report.restarts == 0
    assert not list(report.findings)


# Pinned to 2025-11-25: liveness is a ping there (2026-07-28 has no ping and uses server/discover).
def test_server_alive_finds_a_wedged_server() -> None:
    report = run_checks(faulty("ping-dies"), ["server_alive"], samples=0, alive_timeout=0.3, max_restarts=1, revision="2025-11-25")
    assert "RequestTimeout" in classes(report, "server_alive")
    assert report.restarts == 1


def test_server_alive_finds_a_ping_error() -> None:
    report = run_checks(faulty("ping-error"), ["server_alive"], samples=0, max_restarts=1, revision="2025-11-25")
    assert classes(report, "server_alive") == {"ping-error"}


def test_server_alive_finds_a_server_that_died() -> None:
    report = run_checks(Target(kind="stdio", command=(PY, str(SERVERS / "crashes_on_call.py"))), ["server_alive"], samples=0, max_restarts=0)
    assert classes(report, "server_alive") == {"ServerExited"}


# -- latency ------------------------------------------------------------------------------------------


def test_latency_over_budget() -> None:
    report = run_checks(faulty("slow"), ["latency"], samples=0, settings=CheckSettings(latency_budget={"echo": 0.05}))
    assert "over-budget" in classes(report, "latency")
    assert all(d >= 0.1 for d in report.tools["echo"].durations)


def test_latency_within_budget() -> None:
    report = run_checks(faulty("slow"), ["latency"], samples=0, settings=CheckSettings(latency_budget={"*": 5.0}))
    assert report.tools["echo"].durations  # every call's duration is recorded
    assert not list(report.findings)
