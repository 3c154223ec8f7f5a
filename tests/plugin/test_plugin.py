"""The pytest plugin, run on throwaway projects with pytester (as pytest tests its own plugins).

The demo server's planted defects (tests/demo_defects.py) must each fail the right item; the clean
reference server (built with the official SDK) must fail none; -k, -x, -n 2 and --junitxml must work.
"""

from __future__ import annotations

import re
import shlex
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests"))
from demo_defects import DEFECTS, DESTRUCTIVE_TOOLS  # noqa: E402

#: Which item and check report each planted defect (issue 4: "find every planted defect ... by signature").
EXPECTED = {
    "off_by_one_at_maximum": ("book_berth[go]", "bounds_honoured"),
    "missing_validation_pattern": ("order_services[no-go]", "nogo_stops"),
    "unicode_crash_leaks_traceback": ("register_vessel[go]", "no_leaks"),
    "structured_output_breaks_schema": ("quote_fee[go]", "output_schema"),
    "booking_filed_under_phone": ("chains", "read_your_writes"),
}


def _project(pytester: pytest.Pytester, target: str, extra: str = "") -> None:
    pytester.makefile(
        ".toml",
        pyproject=f"""
        [tool.feeler]
        targets = {{ demo = {target!r} }}
        samples = 3
        replay_dir = "replays"
        {extra}
        """,
    )


def test_every_planted_defect_fails_its_item(pytester: pytest.Pytester) -> None:
    assert set(EXPECTED) == {d.key for d in DEFECTS}, "a planted defect has no expected item"
    _project(pytester, "feeler.demo.server:server")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "--junitxml=report.xml", "-q", "-rfEs")
    failed = {line.split("::")[-1].split(" ")[0] for line in result.outlines if line.startswith("FAILED")}
    for key, (item, check) in EXPECTED.items():
        assert item in failed, f"{key}: item {item} did not fail"
        assert any(f"[{check}]" in line for line in result.outlines), f"{key}: no [{check}] finding shown"
    # The destructive tool is skipped, not called (issue 4, Safety).
    for tool in DESTRUCTIVE_TOOLS:
        assert any(f"{tool}: annotated destructive" in line for line in result.outlines)
    # junitxml: findings are attached to the test cases as properties.
    tree = ET.parse(pytester.path / "report.xml")
    props = [p.get("value") for p in tree.iter("property") if p.get("name") == "feeler_finding"]
    assert any("bounds_honoured" in str(p) for p in props)
    assert result.ret == pytest.ExitCode.TESTS_FAILED


def test_clean_reference_server_passes(pytester: pytest.Pytester) -> None:
    command = f"{sys.executable} {ROOT / 'tests' / 'servers' / 'clean_reference.py'}"
    _project(pytester, command)
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q")
    outcomes = result.parseoutcomes()
    assert outcomes.get("failed", 0) == 0 and outcomes.get("passed", 0) > 0
    assert result.ret == pytest.ExitCode.OK
    assert any("passed" in line for line in result.outlines)


def test_k_selects_and_x_stops(pytester: pytest.Pytester) -> None:
    _project(pytester, "feeler.demo.server:server")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "quote_fee and go and not no")
    result.assert_outcomes(failed=1)
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-x")
    assert sum(1 for line in result.outlines if line.startswith("FAILED")) == 1


def test_xdist_two_workers(pytester: pytest.Pytester) -> None:
    pytest.importorskip("xdist")
    _project(pytester, "feeler.demo.server:server")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-n", "2", "-k", "order_services or book_berth")
    failed = {line.split("::")[-1].split(" ")[0] for line in result.outlines if line.startswith("FAILED")}
    assert "book_berth[go]" in failed
    # order_services needs an existing booking: its no-go defect shows where the worker learned one from
    # book_berth, else its [go] item carries the values_needed hint; either way it fails, never passes.
    assert {"order_services[no-go]", "order_services[go]"} & failed, failed


def test_session_fixture_for_hand_written_tests(pytester: pytest.Pytester) -> None:
    _project(pytester, "feeler.demo.server:server")
    pytester.makepyfile(
        test_mine="""
        def test_lists(feeler_session):
            # MCP server/tools: tools/list answers with a list of tools
            tools, _ = feeler_session.list_all("tools/list")
            assert "quote_fee" in {t["name"] for t in tools}
        """
    )
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "--feeler-off")
    # --feeler-off turns off the generated items only: the hand-written test still gets its session
    result.assert_outcomes(passed=1)
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "test_mine.py", "-k", "test_lists")
    result.assert_outcomes(passed=1)


def test_bad_config_is_a_usage_error(pytester: pytest.Pytester) -> None:
    """pytest docs "Exit codes": 4 = command line usage error; one ERROR line, no INTERNALERROR."""
    pytester.makefile(".toml", pyproject="[tool.feeler]\ntargts = { demo = 'x' }\n")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q")
    assert result.ret == pytest.ExitCode.USAGE_ERROR
    errors = [line for line in result.errlines if line.startswith("ERROR:")]
    assert len(errors) == 1 and "did you mean 'targets'" in errors[0], result.errlines
    assert not any("INTERNALERROR" in line for line in result.errlines + result.outlines)


def test_a_100_level_output_schema_fails_the_catalog_item_with_a_finding(pytester: pytest.Pytester) -> None:
    """JSON Schema 2020-12 (any depth is valid) meets feeler's limit (feeler._limits, 64 levels): the
    catalog item fails with the output_schema_valid finding, no item errors with a RecursionError."""
    _project(pytester, f"{sys.executable} {ROOT / 'tests' / 'check' / 'servers' / 'faulty.py'} output-hostile deep")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-rfE", "-k", "catalog or go")
    text = "\n".join(result.outlines + result.errlines)
    assert "RecursionError" not in text and "INTERNALERROR" not in text, text[-3000:]
    assert any(line.startswith("FAILED") and "catalog" in line for line in result.outlines), text[-3000:]
    assert "[output_schema_valid]" in text and "nests more than 64 levels deep" in text, text[-3000:]
    assert result.parseoutcomes().get("error", 0) == 0


def test_unusable_input_schemas_fail_items_with_findings_not_errors(pytester: pytest.Pytester) -> None:
    """tests/servers/hostile_input_schemas.py through the plugin, bounded: the schema problems found up front
    (feeler._limits.MAX_COUNT, the pattern shape check) fail the catalog item, the pattern that ran past its
    time budget while the no-go cases were made fails that tool's [no-go] item; no item errors, no
    INTERNALERROR, and echo's items pass (MCP 2025-11-25 basic/index "JSON Schema usage": one tool at a time)."""
    _project(pytester, f"{sys.executable} {ROOT / 'tests' / 'servers' / 'hostile_input_schemas.py'}")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-rfE", "-k", "not probe", timeout=180)
    text = "\n".join(result.outlines + result.errlines)
    assert "Traceback" not in text and "INTERNALERROR" not in text, text[-3000:]
    failed = sorted(line.split(" ")[1] for line in result.outlines if line.startswith("FAILED"))
    assert failed == ["feeler::demo::catalog", "feeler::demo::chained_alternatives[no-go]"], text[-3000:]
    for says in ("tool 'huge_min_length': /properties/a/minLength: minLength 1e+308 is over the limit of 10,000",
                 "tool 'huge_min_items': /properties/a/minItems: minItems 1,000,000,000 is over the limit",
                 "tool 'same_alternatives': /properties/a/pattern: pattern '^(a|a)*$' repeats alternatives",
                 "tool 'greedy_rounds': /properties/a/pattern: pattern '^(.*a){20}$' repeats a part",
                 "tool 'nested_bounds': /properties/a/pattern: pattern '^(a{1,30}){1,30}$' repeats a part",
                 "/properties/a/pattern: pattern '^(a|a)(a|a)"):  # fmt: skip
        assert any(line.startswith("[schema_usable]") and says in line for line in result.outlines), says
    assert any("took more than 2s to match one value" in line for line in result.outlines), text[-3000:]
    assert result.parseoutcomes().get("error", 0) == 0


def test_catalog_item_fails_on_drift_and_approve_writes(pytester: pytest.Pytester, monkeypatch: pytest.MonkeyPatch) -> None:
    from feeler.baseline import target_slug

    # When this suite itself runs under pytest-xdist, the child run must not look like a worker.
    monkeypatch.delenv("PYTEST_XDIST_WORKER", raising=False)

    # The approved baseline of the current demo, placed where the *next release* target looks for its own:
    # baselines/<target name> (the [tool.feeler] name; a slug only for targets given on the command line).
    approved = (ROOT / "baselines" / target_slug("feeler.demo.server:server") / "catalog.json").read_text(encoding="utf-8")
    folder = pytester.path / "baselines" / "demo"
    folder.mkdir(parents=True)
    (folder / "catalog.json").write_text(approved, encoding="utf-8")
    _project(pytester, "feeler.demo.server:next_server")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog")
    result.assert_outcomes(failed=1)
    assert any("differs from the approved baseline" in line for line in result.outlines)
    assert any("[BREAKING]" in line for line in result.outlines)
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog", "--feeler-approve")
    result.assert_outcomes(passed=1)
    assert (folder / "catalog.json").read_text(encoding="utf-8") != approved
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog")
    result.assert_outcomes(passed=1)
    # The drift message's own command approves as printed too (run from the project folder).
    (folder / "catalog.json").write_text(approved, encoding="utf-8")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog")
    command = re.search(r"approve it with `([^`]+)`", "\n".join(result.outlines))
    assert command, result.outlines
    argv = shlex.split(command.group(1))
    assert argv[:2] == ["feeler", "approve"] and argv[-1] == "demo"
    done = subprocess.run([sys.executable, "-m", "feeler.cli", *argv[1:]], cwd=pytester.path, capture_output=True,
                          text=True, timeout=180)
    assert done.returncode == 0, done.stdout + done.stderr
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog")
    result.assert_outcomes(passed=1)


def test_catalog_item_compares_recorded_outputs(pytester: pytest.Pytester, monkeypatch: pytest.MonkeyPatch) -> None:
    import json

    from feeler.baseline import target_slug

    monkeypatch.delenv("PYTEST_XDIST_WORKER", raising=False)
    source = ROOT / "baselines" / target_slug("feeler.demo.server:server")
    folder = pytester.path / "baselines" / "demo"  # the [tool.feeler] target name
    folder.mkdir(parents=True)
    (folder / "catalog.json").write_text((source / "catalog.json").read_text(encoding="utf-8"), encoding="utf-8")
    outputs = json.loads((source / "outputs.json").read_text(encoding="utf-8"))
    outputs["records"][0]["result"]["isError"] = True  # an approved output the server no longer gives
    (folder / "outputs.json").write_text(json.dumps(outputs, indent=2), encoding="utf-8")
    _project(pytester, "feeler.demo.server:server")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog")
    result.assert_outcomes(failed=1)
    assert any("recorded output(s) changed" in line for line in result.outlines)
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog", "--feeler-approve")
    result.assert_outcomes(passed=1)
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog")
    result.assert_outcomes(passed=1)


def test_a_file_given_on_the_command_line_runs_no_feeler_items(pytester: pytest.Pytester) -> None:
    # pytest's own rule (docs "Specifying which tests to run"): paths given means only those are collected.
    _project(pytester, "feeler.demo.server:server")
    pytester.makepyfile(test_one="def test_one():\n    assert 1 + 1 == 2\n")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "test_one.py")
    result.assert_outcomes(passed=1)
    assert not any("feeler::" in line for line in result.outlines)


def test_a_missing_baseline_is_a_skip_with_the_command_that_creates_it(pytester: pytest.Pytester,
                                                                         monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("PYTEST_XDIST_WORKER", raising=False)
    _project(pytester, "feeler.demo.server:server")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-rs", "-k", "catalog")
    result.assert_outcomes(skipped=1)
    line = next(x for x in result.outlines if "create it with: " in x)
    command = line.split("create it with: ", 1)[1].split("  (or:", 1)[0]
    argv = shlex.split(command)
    assert argv[0] == "feeler"
    done = subprocess.run([sys.executable, "-m", "feeler.cli", *argv[1:]], cwd=pytester.path, capture_output=True,
                          text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog")
    result.assert_outcomes(passed=1)


def test_approve_under_xdist_refuses_with_a_clear_message(pytester: pytest.Pytester, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("PYTEST_XDIST_WORKER", raising=False)
    _project(pytester, "feeler.demo.server:server")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-n", "1", "-k", "catalog", "--feeler-approve")
    result.assert_outcomes(failed=1)
    assert any("writes baselines from one process only" in line for line in result.outlines)
    assert not (pytester.path / "baselines").exists()
