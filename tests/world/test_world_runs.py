"""Known values against a real server (tests/servers/refuses_other_roots.py, a subprocess over stdio).

References: JSON Schema 2020-12 validation 6.1.1 (``type``: the string "3" is not an integer), checked
with ``jsonschema`` as the reference validator; validation section 9 (``default``/``examples`` are
annotations, so feeler checks them before use); MCP 2025-11-25 server/tools "Error Handling" (the server
refuses with ``isError: true``).
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Any

import jsonschema

TESTS = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(TESTS / "check"))
from check_helpers import PY, SERVERS, cli_json, run_cli  # noqa: E402

SERVER = ["--", PY, str(SERVERS / "refuses_other_roots.py")]
TOOLS = {"list_entries", "read_entry", "count_entries"}
FEW = ["--samples", "2", "--no-probes"]


NOGO = ("nogo_stops",)
GATE = ("gate_opens",)


def _by(report: dict[str, Any], *checks: str) -> list[dict[str, Any]]:
    return [f for f in report["findings"] if f["check"] in checks]


def test_without_values_one_hint_per_tool_and_no_attributable_verdict(tmp_path: Path) -> None:
    code, report = cli_json([*FEW, "--replay-dir", str(tmp_path), *SERVER])
    assert code == 1
    hints = _by(report, "values_needed")
    # One finding per tool, or one finding naming the tools it concerns (the same message, tool name blanked).
    assert {t for f in hints for t in (f.get("tools") or [f["tool"]])} == TOOLS
    for hint in hints:
        assert "access denied: this root is not the workspace root" in hint["message"]
        assert "--value root=" in hint["message"]
    # No wall of errors: no gate-opening finding and no per-case go refusal beside the hint.
    assert not _by(report, *GATE)
    assert not [f for f in report["findings"] if f["kind"] == "go" and f["severity"] == "error"]
    for name in TOOLS:
        tool = report["tools"][name]
        assert tool["go"]["entered"] == 0 and tool["noGo"]["calls"] > 0
        assert tool["noGoVerdicts"]["stopped"] == 0 and tool["noGoVerdicts"]["unattributed"] == tool["noGo"]["calls"]
        assert tool["attributableShare"] == 0
    assert not _by(report, *NOGO)  # the planted type defect stays behind the gate
    # On-bound depth values were refused for the root, not the bound: their bases were refused too.
    assert not _by(report, "bounds_honoured")


def test_with_the_root_every_tool_enters_and_the_type_defect_shows(tmp_path: Path) -> None:
    code, report = cli_json([*FEW, "--value", "root=/srv/orchard", "--replay-dir", str(tmp_path), *SERVER])
    assert code == 1
    assert not _by(report, "values_needed") and not _by(report, *GATE)
    for name in TOOLS:
        tool = report["tools"][name]
        assert tool["go"]["entered"] > 0 and tool["enteredBySource"].get("known", 0) > 0
        assert tool["attributableShare"] > 0.9
    [defect] = _by(report, *NOGO)
    assert defect["tool"] == "list_entries" and defect["keyword"] == "type" and defect["instanceLocation"] == "/depth"
    assert report["tools"]["list_entries"]["noGoVerdicts"]["entered"] >= 1
    # The reference validator agrees the arguments break "type" (a numeric string is not an integer).
    depth_schema = {"type": "integer", "minimum": 0, "maximum": 5}
    assert isinstance(defect["arguments"]["depth"], str) and not jsonschema.Draft202012Validator(depth_schema).is_valid(defect["arguments"]["depth"])
    assert defect["arguments"]["root"] == "/srv/orchard"
    # The bad "examples" entry of count_entries is a catalog finding (validation 9.5).
    [example] = _by(report, "examples_valid")
    assert example["tool"] == "count_entries" and "/properties/kind/examples/1" in example["message"]


def test_a_known_value_breaking_the_schema_is_a_usage_error(tmp_path: Path) -> None:
    code, _, err = run_cli(["check", *FEW, "--value", "depth=9", "--replay-dir", str(tmp_path), *SERVER])
    assert code == 2
    assert "'list_entries'" in err and "'depth'" in err and "9" in err and "'maximum'" in err


def test_text_report_names_the_sources_and_the_hint(tmp_path: Path) -> None:
    code, out, _ = run_cli(["check", *FEW, "--include", "list_entries", "--replay-dir", str(tmp_path), *SERVER])
    assert code == 1 and "[values_needed]" in out and "unattributed" in out
    code, out, _ = run_cli(["check", *FEW, "--include", "list_entries", "--value", "list_entries:root=/srv/orchard",
                            "--replay-dir", str(tmp_path), *SERVER])  # fmt: skip
    assert "entered by source: known" in out and "attributable" in out


URLS = ["--", PY, str(SERVERS / "echoes_refused_urls.py")]


def test_refusals_that_repeat_the_url_sent_are_one_message_and_name_the_property(tmp_path: Path) -> None:
    """A tool refuses every host but its own and repeats the URL and host unquoted, so no two refusals read
    alike word for word: feeler still sees one message (the echoed URL and host blanked), names the property
    whose value the message repeats (`source`, also when only its `default` was in force), and reports no
    broken gate (tests/servers/echoes_refused_urls.py; MCP 2025-11-25 server/tools "Error Handling")."""
    code, report = cli_json([*FEW, "--replay-dir", str(tmp_path), *URLS])
    [hint] = _by(report, "values_needed")
    assert "host HOST" not in hint["message"] and "is not in the allowed hosts list" in hint["message"]
    assert "--value source=" in hint["message"]
    assert not _by(report, *GATE) and code == 1  # the hint is an error-grade finding: the run is not clean
    assert report["tools"]["compress_page"]["go"]["entered"] == 0

    code, report = cli_json([*FEW, "--value", 'source=["http://127.0.0.1/guide.md", "http://127.0.0.1/notes.md"]',
                             "--replay-dir", str(tmp_path), *URLS])
    assert not _by(report, "values_needed") and not _by(report, *GATE)
    assert report["tools"]["compress_page"]["go"]["entered"] > 0
