"""One real ``feeler check`` of the demo (two tools, few drawn cases) shared by the report tests."""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any

import pytest

from feeler.cli import run

#: Two demo tools: order_services carries a planted defect (tests/demo_defects.py), list_berths answers fast.
REPORT_TOOLS = ("list_berths", "order_services")


@pytest.fixture(scope="session")
def checked(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    """The report folder written by ``feeler check --report-dir`` and the JSON document in it."""
    base = tmp_path_factory.mktemp("report")
    folder = base / "reports"
    argv = ["check", "--samples", "3", "--report-dir", str(folder), "--replay-dir", str(base / "replays")]
    for tool in REPORT_TOOLS:
        argv += ["--include", tool]
    code = run([*argv, "--", sys.executable, "-m", "feeler.demo"])
    doc = json.loads((folder / "feeler-report.json").read_text(encoding="utf-8"))
    return {"code": code, "folder": Path(folder), "doc": doc}
