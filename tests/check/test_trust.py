"""Findings a maintainer can trust: one finding for one defect, no leak of secrets into any artefact,
crashes seen through the SDK's isError text, failures returned as successes.

References: JSON-RPC 2.0 section 5.1 (error object); MCP 2025-11-25 server/tools (error handling:
``isError: true`` for tool errors; Security: servers must not leak internals); the official Python SDK
(``mcp.server.mcpserver.tools.base``: a crash becomes ``Error executing tool NAME``).
"""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path

import pytest
from check_helpers import PY, SERVERS, run_checks, run_cli, script

from feeler.check.registry import CheckSettings
from feeler.target import Target

TOKEN = "tok-7f3e9c1a55d2b8e4"  # a planted bearer-like token (environment name ends in TOKEN)
DSN = "pg://quay:hunter2-ebb-tide@127.0.0.1/moorings"  # a secret under a name nobody would guess


def test_fourteen_tools_same_probe_answer_is_one_finding() -> None:
    """14 tools that all accept `arguments` as an array, a string and null (JSON-RPC 2.0 section 4.2: params
    must be structured; MCP 2025-11-25 server/tools: arguments is an object) give one finding per probe,
    each listing the 14 tools, not 42."""
    sys.path.insert(0, str(SERVERS))
    from fourteen_same_tools import NAMES

    report = run_checks(script("fourteen_same_tools.py"), ["probe_answer"], probes=True, samples=0)
    findings = list(report.findings)
    per_tool = [f for f in findings if f.tool is not None]
    print(f"\nprobe findings: {len(per_tool)} for {len(NAMES)} tools")
    assert {f.error_class for f in per_tool} == {"arguments-array:accepted", "arguments-string:accepted", "arguments-null:accepted"}
    assert len(per_tool) == 3
    for finding in per_tool:
        assert sorted(finding.tools) == NAMES
        assert finding.count >= len(NAMES)
        assert finding.to_json()["tools"] == finding.tools


def test_fourteen_tools_with_every_catalog_check_give_few_findings() -> None:
    """The same 14 tools under every catalog check and the probes: the parameter `hours` without a description
    is one finding for the 14 tools (MCP 2025-11-25 server/tools: description), the numbered descriptions
    ("Read tide gauge number 01 of the quay.") are a family told apart by their numbers, not 91 pairs of
    near-duplicates, and the probes give one finding per malformed request."""
    from feeler.check.registry import CHECKS
    from fourteen_same_tools import NAMES

    catalog_checks = [name for name, check in CHECKS.items() if "catalog" in check.applies_to]
    report = run_checks(script("fourteen_same_tools.py"), ["probe_answer", *catalog_checks], probes=True, samples=0)
    found = sorted((f.check, f.error_class, len(f.tools)) for f in report.findings)
    print(f"\nfindings on 14 tools with {len(catalog_checks)} catalog checks and the probes: {len(found)}")
    assert found == sorted([
        ("descriptions", "parameters", len(NAMES)),
        ("probe_answer", "arguments-array:accepted", len(NAMES)),
        ("probe_answer", "arguments-string:accepted", len(NAMES)),
        ("probe_answer", "arguments-null:accepted", len(NAMES)),
        ("probe_answer", "null-id:accepted", 0),  # a server-wide probe (MCP basic: ids MUST NOT be null)
    ])


REPORT_FORMATS = ("json", "markdown", "junit", "sarif", "html")


def test_secrets_never_reach_an_artefact(pytester: pytest.Pytester, monkeypatch: pytest.MonkeyPatch) -> None:
    """A server puts a token, a secret environment value and absolute paths into its errors and results.
    Neither secret appears in any file feeler writes nor in anything it prints: `feeler check` (text, JSON,
    --report-dir in every --report-format, --call-log, replay files), `feeler replay`, `feeler approve
    --record-outputs`, a short `feeler campaign` (state, call log, replays, reports), and a pytest run of the
    plugin (--feeler-report, --junitxml, --feeler-approve with recorded outputs). Every file under the project
    is read, whatever its suffix. Recorded outputs write the project, home and server working folders as
    <project>, <home> and <server-cwd> (common practice: secrets and machine paths are not written to files
    meant to be committed)."""
    monkeypatch.delenv("PYTEST_XDIST_WORKER", raising=False)  # the inner pytest and `approve` write from here
    monkeypatch.setenv("HOME", str(pytester.path / "home"))  # pytester makes its own folder the home: keep them apart
    (pytester.path / "home").mkdir()
    (pytester.path / "srv").mkdir()
    monkeypatch.setenv("HARBOUR_API_TOKEN", TOKEN)  # recognised by its name
    monkeypatch.setenv("HARBOUR_DSN", DSN)  # recognised only because the config lists it
    server = str(SERVERS / "leaks_secrets.py")
    pytester.makefile(".toml", pyproject=f"""
        [tool.feeler]
        secret_env = ["HARBOUR_DSN"]
        targets = {{ leak = {{ command = [{json.dumps(PY)}, {json.dumps(server)}], cwd = "srv" }} }}
        record_tools = ["lookup"]
        replay_dir = "replays"
        samples = 2
        chain_runs = 0
        """)
    terminal: dict[str, str] = {}

    def cli(name: str, *argv: str) -> int:
        code, out, err = run_cli(list(argv))
        terminal[name], terminal[name + " (stderr)"] = out, err
        return code

    formats = [arg for f in REPORT_FORMATS for arg in ("--report-format", f)]
    assert cli("check (text)", "check", "leak", "--report-dir", "reports", *formats, "--call-log", "calls.jsonl") == 1
    assert cli("check (json)", "check", "--format", "json", "leak") == 1
    report = json.loads(terminal["check (json)"])
    assert any(f["check"] == "no_leaks" and "secret" in f["message"] for f in report["findings"])  # reported by name
    replay_files = sorted((pytester.path / "replays").rglob("*.json"))
    assert replay_files
    for i, path in enumerate(replay_files[:3]):
        cli(f"replay {i}", "replay", str(path))
    assert "sent:" in terminal["replay 0"]
    assert cli("approve", "approve", f"{PY} {server}", "--record-outputs", "--yes", "--baselines", "approved") == 0
    assert cli("campaign", "campaign", "--budget", "3s", "--folder", "campaign", "--replay-dir", "campaign-replays",
               "--report-dir", "campaign-reports", "--", PY, server) == 1
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "--feeler-report", "pytest-reports",
                                           "--junitxml", "junit.xml", "--feeler-approve")
    terminal["pytest"] = "\n".join(result.outlines + result.errlines)
    assert result.ret == pytest.ExitCode.TESTS_FAILED, terminal["pytest"][-2000:]

    files = [p for p in pytester.path.rglob("*") if p.is_file()]
    artefacts = {**terminal, **{str(p.relative_to(pytester.path)): p.read_bytes().decode("utf-8", "replace") for p in files}}
    for name, text in artefacts.items():
        for secret in (TOKEN, DSN, "hunter2-ebb-tide"):
            assert secret not in text, f"{secret!r} leaked into {name}"
    kinds = {  # every kind of artefact was there to be read
        "report " + f: any(n.startswith("reports/") and n.endswith(ext) for n in artefacts)
        for f, ext in zip(REPORT_FORMATS, (".json", ".md", ".xml", ".sarif", ".html"))
    }
    kinds |= {kind: any(n.startswith(prefix) for n in artefacts) for kind, prefix in [
        ("call log", "calls.jsonl"), ("replay file", "replays/"), ("baseline", "approved/"),
        ("campaign state", "campaign/state.json"), ("campaign call log", "campaign/calls.jsonl"),
        ("campaign replay", "campaign-replays/"), ("campaign report", "campaign-reports/"),
        ("plugin report", "pytest-reports/"), ("junit xml", "junit.xml"), ("plugin baseline", "baselines/"),
    ]}
    assert all(kinds.values()), [k for k, v in kinds.items() if not v]
    replay_texts = "".join(text for name, text in artefacts.items() if name.startswith("replays/"))
    assert "[secret:HARBOUR_DSN]" in replay_texts and "[secret:HARBOUR_API_TOKEN]" in replay_texts  # masked in place

    approved = next((pytester.path / "approved").rglob("outputs.json")).read_text(encoding="utf-8")
    plugin = next((pytester.path / "baselines").rglob("outputs.json")).read_text(encoding="utf-8")
    for recorded in (approved, plugin):
        assert str(pytester.path) not in recorded
    assert "<project>/moorings.db" in approved and "<home>/.harbour/cache" in approved  # run from the project folder
    assert "<server-cwd>/moorings.db" in plugin and "<home>/.harbour/cache" in plugin  # cwd = "srv" in the config


def test_path_the_user_gave_is_not_a_leak(tmp_path: Path) -> None:
    """A path under the target's working folder or its command line, shown back in an error, leaks nothing
    the user did not know; the same server run elsewhere does leak (common practice: OWASP error handling)."""
    server = str(SERVERS / "leaks_secrets.py")
    given = Target(kind="stdio", command=(PY, server), cwd=str(tmp_path))
    report = run_checks(given, ["no_leaks"], samples=0)
    assert not [f for f in report.findings if f.error_class == "absolute-path"]
    on_command_line = run_checks(Target(kind="stdio", command=(PY, server, "/srv/quay/data")), ["no_leaks"], samples=0)
    assert not [f for f in on_command_line.findings if f.error_class == "absolute-path"]
    hidden = Target(kind="stdio", command=(PY, server), env={"HARBOUR_DATA": "/srv/quay/data"})
    elsewhere = run_checks(hidden, ["no_leaks"], samples=0, settings=CheckSettings())
    leaks = [f for f in elsewhere.findings if f.error_class == "absolute-path"]
    assert leaks and "/srv/quay/data" in leaks[0].message


def test_resolved_form_of_a_path_sent_is_not_a_leak(tmp_path: Path) -> None:
    """An SDK server that resolves its `path` argument under its notes folder and names the resolved path in
    its refusals ("<folder>/.. is outside the notes folder", "no note at <folder>/0"): with the folder given
    (working folder, command line) nothing leaks, whatever value was sent ("..", "../..", a name with a
    space, one character); with the folder hidden in the environment, the folder leaks (common practice:
    OWASP error handling; MCP 2025-11-25 server/tools, Security)."""
    from feeler.check.runner import RunOptions, Runner
    from feeler.world.known import known_pool

    notes = tmp_path / "notes"
    notes.mkdir()
    (notes / "tide log.txt").write_text("high water 06:12\n", encoding="utf-8")
    server = str(SERVERS / "resolves_paths.py")
    sent = {"path": ["..", "../..", "tide log.txt", "no such note.txt", "0", "", "."]}

    def leaks(target: Target, every_value: bool = True) -> list[str]:
        options = RunOptions(checks=["no_leaks"], samples=20, probes=False, replay_dir=None, values=known_pool((), sent))
        runner = Runner(target, options, session_options={"timeout": 60})
        seen: set[str] = set()
        runner.on_call = lambda _tool, case, _ctx, _failed: seen.add(json.dumps(case.arguments))
        report = runner.run()
        if every_value:  # every value was sent (known values, sample seed 0)
            assert {json.dumps({"path": v}) for v in sent["path"]} <= seen
        return [f.message for f in report.findings if f.error_class == "absolute-path"]

    assert leaks(Target(kind="stdio", command=(PY, server), cwd=str(notes))) == []
    assert leaks(Target(kind="stdio", command=(PY, server, str(notes)))) == []
    hidden = leaks(Target(kind="stdio", command=(PY, server), env={"NOTES_ROOT": str(notes)}), every_value=False)
    assert hidden and str(tmp_path) in hidden[0]


def test_a_tool_that_needs_tasks_is_not_called_and_says_why() -> None:
    """A tool with execution.taskSupport "required" refuses plain calls (MCP 2025-11-25 server/tools, execution;
    PROTOCOL.md section 11: -32601 without a task). feeler sends no task, so it does not call the tool and
    says so, instead of a values hint or a gate that never opens."""
    from check_helpers import faulty

    report = run_checks(faulty("task-required"), ["go_enters", "gate_opens", "values_needed"], samples=3)
    stats = report.tools["echo"]
    assert stats.go_calls == 0 and stats.nogo_calls == 0
    assert stats.skipped and "taskSupport: required" in stats.skipped
    assert [f.check for f in report.findings] == []  # neither a values hint nor a gate that never opens
    clean = run_checks(faulty("clean"), ["go_enters"], samples=3)
    assert clean.tools["echo"].go_calls > 0 and not clean.tools["echo"].skipped
