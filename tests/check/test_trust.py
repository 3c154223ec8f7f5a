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


def _walk_files(root: Path) -> list[Path]:
    return [p for p in root.rglob("*") if p.is_file()]


def test_secrets_never_reach_an_artefact(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """A server puts a token, a secret environment value and absolute paths into its errors and results.
    Neither secret appears in the terminal report, the JSON report, a replay file, what `feeler replay`
    prints, the baseline or the recorded outputs; recorded outputs hold no absolute path of the project or
    home folder (common practice: secrets are not written to files meant to be committed)."""
    monkeypatch.chdir(tmp_path)
    monkeypatch.delenv("PYTEST_XDIST_WORKER", raising=False)  # `feeler approve` writes from this process
    monkeypatch.setenv("HARBOUR_API_TOKEN", TOKEN)  # recognised by its name
    monkeypatch.setenv("HARBOUR_DSN", DSN)  # recognised only because the config lists it
    (tmp_path / "pyproject.toml").write_text('[tool.feeler]\nsecret_env = ["HARBOUR_DSN"]\n', encoding="utf-8")
    server = str(SERVERS / "leaks_secrets.py")
    replays = tmp_path / "replays"
    common = ["--replay-dir", str(replays), "--samples", "2", "--", PY, server]

    code_text, text_out, text_err = run_cli(["check", *common])
    code_json, json_out, json_err = run_cli(["check", "--format", "json", *common])
    assert code_text == code_json == 1, text_err[-1500:]
    report = json.loads(json_out)
    checks = {f["check"] for f in report["findings"]}
    assert "no_leaks" in checks  # the leak itself is reported (by the variable's name, never by value)
    assert any("secret" in f["message"] for f in report["findings"] if f["check"] == "no_leaks")

    replay_files = sorted(replays.rglob("*.json"))
    assert replay_files
    replay_out = "".join(run_cli(["replay", str(f)])[1] for f in replay_files[:3])
    assert "sent:" in replay_out

    baselines = tmp_path / "baselines"
    code, approve_out, approve_err = run_cli(
        ["approve", f"{PY} {server}", "--record-outputs", "--yes", "--baselines", str(baselines)]
    )
    assert code == 0, approve_err
    outputs = list(baselines.rglob("outputs.json"))
    assert outputs and "lookup" in outputs[0].read_text(encoding="utf-8")

    artefacts = {
        "terminal report": text_out + text_err,
        "JSON report": json_out + json_err,
        "feeler replay": replay_out,
        "approve output": approve_out + approve_err,
        **{str(p.relative_to(tmp_path)): p.read_text(encoding="utf-8") for p in _walk_files(tmp_path) if p.suffix == ".json"},
    }
    kinds = {"replay file": 0, "baseline": 0}
    for name, text in artefacts.items():
        kinds["replay file"] += name.startswith("replays")
        kinds["baseline"] += name.startswith("baselines")
        for secret in (TOKEN, DSN, "hunter2-ebb-tide"):
            assert secret not in text, f"{secret!r} leaked into {name}"
    assert kinds["replay file"] and kinds["baseline"] >= 2  # catalog.json and outputs.json were grepped
    replay_texts = "".join(text for name, text in artefacts.items() if name.startswith("replays"))
    assert "[secret:HARBOUR_DSN]" in replay_texts and "[secret:HARBOUR_API_TOKEN]" in replay_texts  # masked, kept in place
    recorded = outputs[0].read_text(encoding="utf-8")
    assert str(tmp_path) not in recorded and os.path.expanduser("~") + "/" not in recorded
    assert "<project>/moorings.db" in recorded and "<home>/.harbour/cache" in recorded


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
