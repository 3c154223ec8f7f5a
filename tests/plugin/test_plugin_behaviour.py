"""The pytest plugin behaves like pytest (issue 12), on throwaway projects with pytester: exact ``-k`` on
item names, honest collection counts, node-id selection, a "feeler" summary section, complete JUnit
properties, replay files named in the failure, a missing baseline as a skip whose command runs as printed.

pytest's own rules are the reference ("Specifying which tests to run": node ids, -k keyword expressions;
the junitxml properties); the demo's planted defects are in tests/demo_defects.py.
"""

from __future__ import annotations

import json
import re
import shlex
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_plugin import _project  # noqa: E402

SHELF = '''
"""Two tools; one name contains the word 'catalog'."""
from mcp.server.mcpserver import MCPServer

server = MCPServer("shelf")


@server.tool(description="Search the catalogue for a title.")
def search_catalogue(title: str) -> str:
    """Search."""
    return f"found {title}"


@server.tool(description="Count items.")
def count_items(n: int = 1) -> str:
    """Count."""
    return str(n)


if __name__ == "__main__":
    server.run("stdio")
'''


def _shelf(pytester: pytest.Pytester) -> None:
    pytester.makepyfile(shelf=SHELF)
    _project(pytester, f"{sys.executable} shelf.py", "chain_runs = 0")


def _ran(result: pytest.RunResult) -> set[str]:
    """The node ids pytest ran, from -v lines (``feeler::shelf::catalog PASSED``)."""
    return {m.group(1) for line in result.outlines if (m := re.match(r"(feeler::\S+) (PASSED|FAILED|SKIPPED)", line))}


def test_k_matches_exact_item_names(pytester: pytest.Pytester) -> None:
    # -k catalog: the catalog item only, not the tool search_catalogue (pytest -k matches substrings of
    # names; feeler items match their exact names: target, tool, kind, item name).
    _shelf(pytester)
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-v", "-k", "catalog")
    assert _ran(result) == {"feeler::demo::catalog"}
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-v", "-k", "not catalog")
    assert "feeler::demo::search_catalogue[go]" in _ran(result) and "feeler::demo::catalog" not in _ran(result)
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-v", "-k", "search_catalogue and go")
    assert _ran(result) == {"feeler::demo::search_catalogue[go]"}


def test_collection_counts_are_honest(pytester: pytest.Pytester) -> None:
    # catalog + 2 tools x (go, no-go, probe) = 7 items, collected (not added afterwards), so pytest's
    # "collected N items / M deselected / K selected" adds up.
    _shelf(pytester)
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "--co")
    assert any(line.startswith("7 tests collected") for line in result.outlines), result.outlines
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-k", "count_items")
    assert any("collected 7 items / 4 deselected / 3 selected" in line for line in result.outlines), result.outlines
    assert not any(re.search(r"-\d+ selected", line) for line in result.outlines)


def test_node_ids_select_items(pytester: pytest.Pytester) -> None:
    _shelf(pytester)
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-v", "feeler::demo::catalog")
    assert _ran(result) == {"feeler::demo::catalog"}
    assert any("collected 1 item" in line for line in result.outlines)
    # a tool's name without a kind selects all its kinds, as pytest matches parametrized ids
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-v", "feeler::demo::count_items")
    assert _ran(result) == {f"feeler::demo::count_items[{k}]" for k in ("go", "no-go", "probe")}
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-v", "feeler::demo::count_items[no-go]")
    assert _ran(result) == {"feeler::demo::count_items[no-go]"}
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "feeler::demo::nothing_here")
    assert result.ret == pytest.ExitCode.INTERRUPTED
    assert any("no item of target demo matches feeler::demo::nothing_here" in line for line in result.outlines)


def test_summary_junit_and_replays(pytester: pytest.Pytester) -> None:
    # The demo's planted defects fail their items; each failure names its replay file (written when the
    # finding arose), JUnit carries every finding in full, and a "feeler" section ends the run.
    _project(pytester, "feeler.demo.server:server", "chain_runs = 0")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "--junitxml=report.xml",
                                           "--feeler-report=reports", "-k", "register_vessel or book_berth")
    text = "\n".join(result.outlines)
    replays = re.findall(r"replay: feeler replay (\S+)", text)
    assert replays and all((pytester.path / r).is_file() for r in replays)
    section = text.split("= feeler =", 1)[1]
    assert re.search(r"demo: \d+ findings? \(\d+ errors?, \d+ warnings?\) in 6 items; replay files in "
                     r"replays/demo/", section), section
    assert "reports: reports/demo" in section
    # JUnit: the findings of an item as properties, in full (README, "In pytest")
    tree = ET.parse(pytester.path / "report.xml")
    case = next(c for c in tree.iter("testcase") if c.get("name") == "register_vessel[go]")
    assert case.get("classname") == "feeler.demo"
    props = [(p.get("name"), p.get("value")) for p in case.iter("property")]
    names = {n for n, _ in props}
    assert {"feeler_finding", "feeler_check", "feeler_severity", "feeler_keywordLocation", "feeler_instanceLocation",
            "feeler_arguments", "feeler_message", "feeler_replay", "feeler_signature"} <= names
    report = json.loads(next((pytester.path / "reports").glob("demo*/feeler-report.json")).read_text(encoding="utf-8"))
    # pytest's junitxml writes characters it takes for illegal XML as "#x..." (its own bin_xml_escape, which
    # also escapes characters beyond U+FFFF): compare with the report's text escaped the same way.
    from _pytest.junitxml import bin_xml_escape

    full = {bin_xml_escape(f["message"]) for f in report["findings"]}
    messages = [v for n, v in props if n == "feeler_message"]
    assert messages and all(m in full for m in messages)  # the same text as the report: nothing cut
    assert any(len(m) > 200 for m in full & set(messages)), "no long message to show that nothing is cut"
    replay = next(v for n, v in props if n == "feeler_replay" and v)
    assert replay.startswith("feeler replay ") and (pytester.path / shlex.split(replay)[2]).is_file()


def test_destructive_skip_names_the_pytest_option(pytester: pytest.Pytester) -> None:
    _project(pytester, "feeler.demo.server:server", "chain_runs = 0")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-rs", "-k", "cancel_booking and go")
    assert any("pass --feeler-allow-destructive to call it" in line for line in result.outlines), result.outlines


@pytest.mark.parametrize("how", ["named with env", "command line"])
def test_missing_baseline_hint_runs_as_printed(pytester: pytest.Pytester, monkeypatch: pytest.MonkeyPatch,
                                               how: str) -> None:
    # The skip names the command that creates the baseline; run as printed (from the project folder) it
    # writes the baseline the next run compares with.
    monkeypatch.delenv("PYTEST_XDIST_WORKER", raising=False)
    pytester.makepyfile(envserver=(
        "import os, runpy, sys\n"
        "if os.environ.get('HARBOUR_MODE') != 'test':\n"
        "    sys.exit('HARBOUR_MODE must be test')\n"
        "runpy.run_module('feeler.demo', run_name='__main__')\n"
    ))
    if how == "named with env":
        pytester.makefile(".toml", pyproject=(
            "[tool.feeler]\nchain_runs = 0\nbaselines = \"approved baselines\"\n"
            f"targets = {{ quay = {{ command = [{json.dumps(sys.executable)}, 'envserver.py'], "
            "env = { HARBOUR_MODE = 'test' } } }\n"
        ))
        args: tuple[str, ...] = ()
    else:
        pytester.makefile(".toml", pyproject="[tool.feeler]\nchain_runs = 0\n")
        args = ("--feeler-target", f"{sys.executable} -m feeler.demo")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-rs", "-k", "catalog", *args)
    result.assert_outcomes(skipped=1)
    line = next(x for x in result.outlines if "create it with: " in x)
    command = line.split("create it with: ", 1)[1].split("  (or:", 1)[0]
    argv = shlex.split(command)
    assert argv[:2] == ["feeler", "approve"] and "--yes" in argv
    if how == "named with env":
        assert argv[-1] == "quay"  # the name carries the env: the command needs nothing more
    done = subprocess.run([sys.executable, "-m", "feeler.cli", *argv[1:]], cwd=pytester.path, capture_output=True,
                          text=True, timeout=180)
    assert done.returncode == 0, done.stdout + done.stderr
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog", *args)
    result.assert_outcomes(passed=1)
