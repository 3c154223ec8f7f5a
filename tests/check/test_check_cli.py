"""``feeler check`` command line: dry run, safety options, output formats and exit codes (issue 4 points 4-5).

Exit codes are feeler's own (src/feeler/cli.py): 0 clean, 1 findings, 2 usage or connection error.
"""

from __future__ import annotations

import json
from pathlib import Path

from check_helpers import FAULTY, PY, SERVERS, cli_json, run_cli

DEMO = "feeler.demo.server:server"
FINDING_FIELDS = {"check", "severity", "tool", "kind", "keyword", "keywordLocation", "instanceLocation", "message", "replay"}


def test_dry_run_calls_no_tool(tmp_path: Path) -> None:
    log = tmp_path / "calls.log"
    args = ["check", "--dry-run", "--samples", "2", "--env", f"FEELER_CALL_LOG={log}", "--", PY, str(FAULTY), "record"]
    code, out, err = run_cli(args)
    assert code == 0, err
    planned = [json.loads(line) for line in out.splitlines()]  # JSON Lines (RFC 8259 objects, one a line)
    assert planned and {row["tool"] for row in planned if row["kind"] != "probe"} == {"echo"}
    assert {"go", "no-go", "probe"} <= {row["kind"] for row in planned}
    assert {"schema", "sampled"} <= {row["source"] for row in planned}
    assert all(row["instanceLocation"] is None or row["instanceLocation"] == "" or row["instanceLocation"].startswith("/")
               for row in planned)
    assert "calls would be made (dry run)" in err
    assert not log.exists()  # the server never saw a tools/call
    # The same server without --dry-run records the calls: the log proves what the dry run claims.
    code, _, _ = run_cli(["check", "--no-probes", "--samples", "2", "--replay-dir", str(tmp_path / "r"),
                          "--env", f"FEELER_CALL_LOG={log}", "--", PY, str(FAULTY), "record"])
    sent = [json.loads(line)["arguments"] for line in log.read_text().splitlines()]
    assert code == 0 and len(sent) >= len([row for row in planned if row["kind"] != "probe"])
    # The go cases (boundary and sampled: the same hypothesis draws) are sent exactly as listed, in order;
    # the no-go cases say that they depend on answers (anchored on go arguments that entered).
    go = [row for row in planned if row["kind"] == "go"]
    assert all(row["dependsOnAnswers"] is None for row in go)  # echo has no input learned values could fill
    assert sent[: len(go)] == [row["arguments"] for row in go]
    assert all(row["dependsOnAnswers"].startswith("anchored") for row in planned if row["kind"] == "no-go")


def test_dry_run_on_a_server_that_dies_on_any_call() -> None:
    code, out, err = run_cli(["check", "--dry-run", "--samples", "1", "--", PY, str(SERVERS / "crashes_on_call.py")])
    assert code == 0, err
    assert out.strip() and "restart" not in err


def test_destructive_tool_called_only_when_allowed(tmp_path: Path) -> None:
    base = ["--no-probes", "--samples", "1", "--replay-dir", str(tmp_path), "--include", "cancel_booking", DEMO]
    code, report = cli_json(base)
    assert code == 0 and report["tools"]["cancel_booking"]["skipped"]
    assert report["tools"]["cancel_booking"]["go"]["calls"] == 0
    code, report = cli_json(["--allow-destructive", *base])
    # Alone, cancel_booking meets no booking (book_berth, which makes them, is left out): the one error is
    # the values_needed hint, not a wall of refusals.
    errors = [f for f in report["findings"] if f["severity"] == "error"]
    assert code == 1 and [f["check"] for f in errors] == ["values_needed"], errors
    stats = report["tools"]["cancel_booking"]
    assert stats["skipped"] is None and stats["go"]["calls"] > 0 and stats["noGo"]["calls"] > 0


def test_text_output_lists_unannotated_and_skipped_tools(tmp_path: Path) -> None:
    code, out, _ = run_cli(["check", "--no-probes", "--samples", "0", "--replay-dir", str(tmp_path),
                            "--include", "register_vessel", "--include", "cancel_booking", "--include", "list_berths", DEMO])
    assert code == 1  # register_vessel's defect
    blocks = {block.splitlines()[0].split("  ")[0]: block for block in out.split("\n\n") if block.strip()}
    assert "[no annotations]" in blocks["register_vessel"].splitlines()[0]
    assert "no annotations" not in blocks["list_berths"].splitlines()[0]
    assert "skipped: annotated destructive" in blocks["cancel_booking"]
    assert "FINDING [" in blocks["register_vessel"] and "replay: feeler replay" in blocks["register_vessel"]


def test_json_fields_documented(tmp_path: Path) -> None:
    code, report = cli_json(["--no-probes", "--samples", "0", "--replay-dir", str(tmp_path), "--include", "book_berth", "--include", "order_services", DEMO])
    assert code == 1 and report["findings"]
    for finding in report["findings"]:
        assert FINDING_FIELDS <= set(finding), FINDING_FIELDS - set(finding)
        assert finding["severity"] in ("error", "warning") and isinstance(finding["message"], str)
    nogo = next(f for f in report["findings"] if f["kind"] == "no-go")
    assert nogo["keyword"] and nogo["keywordLocation"] and nogo["instanceLocation"] is not None and Path(nogo["replay"]).is_file()
    replay = json.loads(Path(nogo["replay"]).read_text(encoding="utf-8"))
    assert {"format", "target", "protocolVersion", "request", "answer", "finding"} <= set(replay)
    assert json.loads(replay["request"])["params"]["arguments"] == nogo["arguments"]


def test_exit_code_0_on_a_clean_server(tmp_path: Path) -> None:
    code, report = cli_json(["--samples", "2", "--replay-dir", str(tmp_path), "--", PY, str(FAULTY), "strict-probes"])
    assert code == 0 and report["findings"] == []


def test_exit_code_2_on_usage_and_connection_errors(tmp_path: Path) -> None:
    code, _, err = run_cli(["check", "--only-check", "no_such_check", DEMO])
    assert code == 2 and "unknown check" in err
    code, _, err = run_cli(["check", "--replay-dir", str(tmp_path), "--", PY, str(SERVERS / "exits_at_start.py")])
    assert code == 2 and err.strip()
    code, _, err = run_cli(["replay", str(tmp_path / "missing.json")])
    assert code == 2 and "cannot read the replay file" in err
