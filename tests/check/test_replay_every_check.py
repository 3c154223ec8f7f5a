"""`feeler replay` judges with the same check and the same case as the stored finding, for every check
that writes replay files: it prints that finding's problem and exits 1 while the server still shows it.

The faulty server modes and what they break are those of tests/check/servers/faulty.py; the rules are
named beside each row (JSON-RPC 2.0, the MCP revision pages, JSON Schema 2020-12).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from check_helpers import faulty, run_checks, run_cli

from feeler.check.registry import CheckSettings

#: check -> (faulty mode and args, run options, error class or None for the first finding of the check)
ROWS: dict[str, tuple[tuple[str, ...], dict[str, Any], str | None]] = {
    "envelope": (("jsonrpc-1.0",), {"samples": 1}, "jsonrpc-version"),  # JSON-RPC 2.0 section 5
    "result_shape": (("bad-content",), {"samples": 1, "revision": "2025-11-25"}, None),  # MCP 2025-11-25 CallToolResult
    "go_enters": (("refuses-valid",), {"samples": 1}, "refused-valid"),  # MCP 2025-11-25 server/tools
    "bounds_honoured": (("off-by-one",), {"samples": 0}, "bound:maximum"),  # JSON Schema 2020-12 6.2.2
    "nogo_stops": (("accepts-anything",), {"samples": 0}, "accepted-invalid"),  # MCP 2025-11-25 server/tools
    "no_crash": (("exception-name",), {"samples": 1}, None),  # common practice
    "no_leaks": (("leaky", "python"), {"samples": 0}, "python-traceback"),  # common practice (OWASP)
    "output_schema": (("output-missing",), {"samples": 2}, "missing"),  # MCP 2025-06-18 output schema
    "output_mirrored": (("output-unmirrored",), {"samples": 2}, None),  # MCP 2025-06-18 output schema
    "server_alive": (("ping-error",), {"samples": 0, "max_restarts": 1, "revision": "2025-11-25"}, None),  # MCP ping
    "latency": (("slow",), {"samples": 0, "settings": CheckSettings(latency_budget={"echo": 0.05})}, None),
    "probe_answer": (("clean",), {"samples": 0, "probes": True}, "null-id:accepted"),  # MCP 2025-11-25 basic/index
}


@pytest.mark.parametrize("check", sorted(ROWS))
def test_replay_shows_the_same_finding(check: str, tmp_path: Path) -> None:
    mode, options, error_class = ROWS[check]
    report = run_checks(faulty(*mode), [check], replay_dir=str(tmp_path), **dict(options))
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


def test_a_replay_of_the_previous_format_is_still_read(tmp_path: Path) -> None:
    mode, options, error_class = ROWS["bounds_honoured"]
    report = run_checks(faulty(*mode), ["bounds_honoured"], replay_dir=str(tmp_path), **dict(options))
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
