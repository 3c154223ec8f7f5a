"""`feeler replay` judges with the same check and the same case as the stored finding, for every check
that writes replay files: it prints that finding's problem and exits 1 while the server still shows it,
0 when a fixed server no longer does, and 2 when it cannot tell (the base the verdict rests on is gone).

The faulty server modes and what they break are those of tests/check/servers/faulty.py (and the servers
of tests/servers); the rules are named beside each row (JSON-RPC 2.0, the MCP revision pages, JSON
Schema 2020-12). Anchored verdicts are DEVELOPERS.md, "The world layer".
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from check_helpers import faulty, run_checks, run_cli, script

from feeler.check.registry import CHECKS, CheckSettings
from feeler.target import Target

#: check -> (the server that shows it, run options, error class or None for the first finding of the check)
ROWS: dict[str, tuple[Target, dict[str, Any], str | None]] = {
    "envelope": (faulty("jsonrpc-1.0"), {"samples": 1}, "jsonrpc-version"),  # JSON-RPC 2.0 section 5
    "result_shape": (faulty("bad-content"), {"samples": 1, "revision": "2025-11-25"}, None),  # MCP 2025-11-25 CallToolResult
    "go_enters": (faulty("refuses-valid"), {"samples": 1}, "refused-valid"),  # MCP 2025-11-25 server/tools
    "bounds_honoured": (faulty("off-by-one"), {"samples": 0}, "bound:maximum"),  # JSON Schema 2020-12 6.2.2
    "nogo_stops": (faulty("accepts-anything"), {"samples": 0}, "accepted-invalid"),  # MCP 2025-11-25 server/tools
    "no_crash": (faulty("exception-name"), {"samples": 1}, None),  # common practice
    "no_leaks": (faulty("leaky", "python"), {"samples": 0}, "python-traceback"),  # common practice (OWASP)
    "output_schema": (faulty("output-missing"), {"samples": 2}, "missing"),  # MCP 2025-06-18 output schema
    "output_mirrored": (faulty("output-unmirrored"), {"samples": 2}, None),  # MCP 2025-06-18 output schema
    "server_alive": (faulty("ping-error"), {"samples": 0, "max_restarts": 1, "revision": "2025-11-25"}, None),  # MCP ping
    "latency": (faulty("slow"), {"samples": 0, "settings": CheckSettings(latency_budget={"echo": 0.05})}, None),
    "probe_answer": (faulty("clean"), {"samples": 0, "probes": True}, "null-id:accepted"),  # MCP 2025-11-25 basic/index
    # MCP 2025-11-25 server/tools error handling: a failure is an isError result, not a success that reads as one
    "failure_as_success": (script("hides_failures.py"), {"samples": 30, "timeout": 60}, "reads-as-failure"),
    # chains (common practice: read-your-writes; MCP 2025-03-26 ToolAnnotations idempotentHint)
    "read_your_writes": (script("records_lost_on_update.py"), {"samples": 3, "timeout": 60}, None),
    "idempotent_repeat": (script("closes_twice.py"), {"samples": 3, "timeout": 60}, "entered-then-stopped"),
}
#: Kinds of call whose findings carry the request that showed them (so a replay file); catalog and
#: tool-level checks look at no single call and write none.
CALL_KINDS = {"go", "no-go", "probe", "alive", "chain"}


def test_every_check_that_writes_replay_files_has_a_row() -> None:
    writes = {name for name, check in CHECKS.items() if set(check.applies_to) & CALL_KINDS}
    assert writes == set(ROWS), f"checks without a replay row: {sorted(writes - set(ROWS))}"


@pytest.mark.parametrize("check", sorted(ROWS))
def test_replay_shows_the_same_finding(check: str, tmp_path: Path) -> None:
    target, options, error_class = ROWS[check]
    report = run_checks(target, [check], replay_dir=str(tmp_path), **dict(options))
    finding = next(f for f in report.findings if f.check == check and (error_class is None or f.error_class == error_class))
    path = Path(finding.replay or "")
    # .feeler/replays/<target>/<tool or _server>/<id>.replay.json, format feeler-replay/2
    assert path.name == f"{finding.short_id}.replay.json" and path.parent.name == (finding.tool or "_server")
    data = json.loads(path.read_text(encoding="utf-8"))
    assert data["format"] == "feeler-replay/2" and data["finding"]["errorClass"] == finding.error_class
    code, out, err = run_cli(["replay", str(path)])
    assert code == 1, out + err
    assert f"finding:  [{check}] {finding.message}" in out
    assert f"reproduced: [{check}]" in out and "not reproduced" not in out


def _replay_file(check: str, tmp_path: Path) -> tuple[Any, Path]:
    target, options, error_class = ROWS[check]
    report = run_checks(target, [check], replay_dir=str(tmp_path / "replays"), **dict(options))
    finding = next(f for f in report.findings if f.check == check and (error_class is None or f.error_class == error_class))
    return finding, Path(finding.replay or "")


def _moved(path: Path, tmp_path: Path, change: Any) -> Path:
    data = json.loads(path.read_text(encoding="utf-8"))
    change(data)
    moved = tmp_path / "moved.replay.json"
    moved.write_text(json.dumps(data), encoding="utf-8")
    return moved


def test_a_replay_file_naming_a_former_check_is_judged_by_its_new_name(tmp_path: Path) -> None:
    # go_accepted became go_enters (DEVELOPERS.md, "Vocabulary"): an old file is judged by the new check.
    from feeler import _deprecated

    _deprecated._shown.clear()
    _, path = _replay_file("go_enters", tmp_path)
    old = _moved(path, tmp_path, lambda data: data["finding"].update(check="go_accepted"))
    code, out, err = run_cli(["replay", str(old)])
    assert code == 1, out + err
    assert "the file names the former check 'go_accepted'; judged by 'go_enters'" in err
    assert "reproduced: [go_enters]" in out and "finding:  [go_enters]" in out


def test_a_fixed_no_go_finding_is_not_reproduced(tmp_path: Path) -> None:
    # The base (the no-go arguments with the keyword intact) enters on the fixed server, which now stops the
    # no-go case (MCP 2025-11-25 server/tools: isError): the finding is gone, exit 0.
    _, path = _replay_file("nogo_stops", tmp_path)
    data = json.loads(path.read_text(encoding="utf-8"))
    assert data["base"]["arguments"] != data["finding"]["arguments"]
    fixed = _moved(path, tmp_path, lambda d: d.update(target=faulty("clean").to_json()))
    code, out, err = run_cli(["replay", str(fixed)])
    assert code == 0 and "not reproduced: [nogo_stops]" in out, out + err
    assert "base:" in out  # the base was sent first


def test_a_fixed_bound_is_not_reproduced_and_a_gone_base_cannot_tell(tmp_path: Path) -> None:
    # JSON Schema 2020-12 validation 6.2.2: maximum 10 allows 10. The replay re-sends the value one step inside
    # the bound and judges with its real outcome: on a server that honours both bounds the finding is gone
    # (exit 0); on one that refuses everything the base does not enter, so it cannot tell (exit 2).
    _, path = _replay_file("bounds_honoured", tmp_path)
    assert "base" in json.loads(path.read_text(encoding="utf-8"))
    fixed = _moved(path, tmp_path, lambda d: d.update(target=faulty("bounded").to_json()))
    code, out, err = run_cli(["replay", str(fixed)])
    assert code == 0 and "not reproduced: [bounds_honoured]" in out, out + err
    refusing = _moved(path, tmp_path, lambda d: d.update(target=faulty("always-is-error").to_json()))
    code, out, err = run_cli(["replay", str(refusing)])
    assert code == 2 and "cannot tell: [bounds_honoured] the base call (the value one step inside the bound)" in err, out + err


def test_a_world_dependent_no_go_finding_replays_while_its_world_holds(demo_http_url: str, tmp_path: Path) -> None:
    # The demo's order_services takes the reference of an existing booking (learned from book_berth). Over
    # HTTP the server keeps its world, so the base still enters and the planted defect (the booking_ref
    # pattern is not enforced) shows again: exit 1. (A fresh stdio server has no such booking: cannot tell,
    # exit 2, see test_check_demo.py.)
    from feeler.check.runner import RunOptions, Runner

    options = RunOptions(samples=3, probes=False, include=["book_berth", "order_services"], chain_runs=0,
                         checks=["nogo_stops"], replay_dir=str(tmp_path))  # fmt: skip
    report = Runner(Target.parse(demo_http_url), options, session_options={"timeout": 60}).run()
    finding = next(f for f in report.findings if f.check == "nogo_stops" and f.tool == "order_services")
    data = json.loads(Path(finding.replay or "").read_text(encoding="utf-8"))
    assert data["base"]["arguments"]["booking_ref"] != finding.arguments["booking_ref"]
    code, out, err = run_cli(["replay", finding.replay or ""])
    assert code == 1, out + err
    assert "base:" in out and "reproduced: [nogo_stops]" in out


def test_a_replay_of_the_previous_format_is_still_read(tmp_path: Path) -> None:
    target, options, error_class = ROWS["bounds_honoured"]
    report = run_checks(target, ["bounds_honoured"], replay_dir=str(tmp_path), **dict(options))
    finding = next(iter(report.findings))
    data = json.loads(Path(finding.replay or "").read_text(encoding="utf-8"))
    # feeler-replay/1 (our previous release): "revision" keys and a $-path; no source, no boundary flag.
    data["format"] = "feeler-replay/1"
    data["revision"] = data.pop("protocolVersion")
    data["finding"]["path"] = "$.count"
    old = tmp_path / "old.json"
    old.write_text(json.dumps(data), encoding="utf-8")
    from feeler.check.replay import load_replay

    loaded = load_replay(str(old))
    assert loaded["protocolVersion"] and loaded["finding"]["instanceLocation"] == "/count"
    # A file that holds no base: the value one step inside the bound is worked out again and sent first.
    del data["base"]
    old.write_text(json.dumps(data), encoding="utf-8")
    code, out, err = run_cli(["replay", str(old)])
    assert code == 1 and "base:" in out and "reproduced: [bounds_honoured]" in out, out + err
