"""``feeler catalog`` and ``feeler demo`` through ``feeler.cli.run``: output, exit codes, and one-line errors
for bad input (issue 2 acceptance: "Bad input gets a one-line error that names the target and what to try").

Exit codes (src/feeler/cli.py): 0 done, 2 usage error or unreachable target. Outside references:
MCP 2025-11-25 basic/transports (stdio, Streamable HTTP), MCP 2026-07-28 basic/versioning.
"""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path
from typing import Any

import pytest

from feeler.catalog import Catalog
from feeler.cli import run

PY = sys.executable
SERVERS = Path(__file__).parent / "servers"


def _one_error_line(capsys: pytest.CaptureFixture[str], *fragments: str) -> str:
    captured = capsys.readouterr()
    lines = captured.err.strip().splitlines()
    assert len(lines) == 1, captured.err
    assert lines[0].startswith("feeler: ")
    for fragment in fragments:
        assert fragment in lines[0], (fragment, lines[0])
    assert captured.out == ""
    return lines[0]


def test_unreachable_url(capsys: pytest.CaptureFixture[str], unused_port: int) -> None:
    url = f"http://127.0.0.1:{unused_port}/mcp"
    assert run(["catalog", "--timeout", "3", url]) == 2
    _one_error_line(capsys, url, "is the server running")


def test_command_that_does_not_exist(capsys: pytest.CaptureFixture[str]) -> None:
    assert run(["catalog", "--", "feeler-no-such-command-4711", "--flag"]) == 2
    _one_error_line(capsys, "feeler-no-such-command-4711", "PATH")


def test_server_that_exits(capsys: pytest.CaptureFixture[str]) -> None:
    script = str(SERVERS / "exits_at_start.py")
    assert run(["catalog", "--timeout", "5", "--", PY, script]) == 2
    _one_error_line(capsys, script, "exit code 2", "harbour.toml not found")


def test_server_that_crashes_on_a_call_is_still_catalogued(capsys: pytest.CaptureFixture[str]) -> None:
    # crashes_on_call only dies on tools/call: capturing its catalog calls no tool
    assert run(["catalog", "--timeout", "5", "--", PY, str(SERVERS / "crashes_on_call.py")]) == 0
    assert json.loads(capsys.readouterr().out)["tools"][0]["name"] == "echo"


def test_never_initializes(capsys: pytest.CaptureFixture[str]) -> None:
    script = str(SERVERS / "never_initializes.py")
    assert run(["catalog", "--timeout", "1", "--", PY, script]) == 2
    _one_error_line(capsys, script, "initialize", "--timeout")


def test_pinning_a_revision_the_server_lacks(capsys: pytest.CaptureFixture[str]) -> None:
    script = str(SERVERS / "modern_only.py")
    assert run(["catalog", "--protocol-version", "2025-11-25", "--timeout", "3", "--", PY, script]) == 2
    _one_error_line(capsys, script, "-32022", "2026-07-28")  # MCP 2026-07-28 basic/versioning


@pytest.mark.parametrize("spec", ["my-mod:app", "pkg:"])
def test_malformed_module_attribute(capsys: pytest.CaptureFixture[str], spec: str) -> None:
    assert run(["catalog", spec]) == 2
    _one_error_line(capsys, repr(spec), "module:attribute")


def test_unknown_module(capsys: pytest.CaptureFixture[str]) -> None:
    assert run(["catalog", "feeler_no_such_module_81:app"]) == 2
    _one_error_line(capsys, "feeler_no_such_module_81", "PYTHONPATH")


def test_a_bearer_token_on_the_command_line_is_refused(capsys: pytest.CaptureFixture[str], unused_port: int) -> None:
    assert run(["catalog", "--bearer-env", "abc.def-secret", f"http://127.0.0.1:{unused_port}/mcp"]) == 2
    _one_error_line(capsys, "NAME of an environment variable")


def test_catalog_to_stdout_is_the_canonical_text(capsys: pytest.CaptureFixture[str]) -> None:
    assert run(["catalog", "feeler.demo.server:server"]) == 0
    out = capsys.readouterr().out
    assert out == Catalog.loads(out).dumps() and out.endswith("\n")
    assert json.loads(out)["protocolVersion"] == "2026-07-28"


def test_catalog_output_file_is_written_atomically(capsys: pytest.CaptureFixture[str], tmp_path: Path, monkeypatch: Any) -> None:
    target = tmp_path / "sub" / "catalog.json"
    assert run(["catalog", "--protocol-version", "2025-11-25", "-o", str(target), "feeler.demo.server:server"]) == 0
    captured = capsys.readouterr()
    assert captured.out == "" and str(target) in captured.err
    text = target.read_text(encoding="utf-8")
    assert Catalog.loads(text).revision == "2025-11-25"
    assert sorted(p.name for p in target.parent.iterdir()) == ["catalog.json"]  # no temp file left

    # a failure while writing leaves the old file as it was and no temp file behind
    def broken_replace(src: str, dst: str) -> None:
        raise OSError("disk full (simulated)")

    monkeypatch.setattr(os, "replace", broken_replace)
    assert run(["catalog", "-o", str(target), "feeler.demo.server:server"]) != 0
    assert "disk full (simulated)" in capsys.readouterr().err
    assert target.read_text(encoding="utf-8") == text
    assert sorted(p.name for p in target.parent.iterdir()) == ["catalog.json"]
