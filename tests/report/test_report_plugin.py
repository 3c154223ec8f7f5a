"""``--feeler-report DIR`` from the pytest plugin on two xdist workers, joined by ``feeler report merge``.

References: the report's JSON Schema (Draft 2020-12, shipped in the package) with `jsonschema`; the demo's
planted defects (tests/demo_defects.py) as the answer key.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from feeler.cli import run
from feeler.report import validate_report


def test_workers_write_reports_that_merge(pytester: pytest.Pytester) -> None:
    pytest.importorskip("xdist")
    pytester.makefile(
        ".toml",
        pyproject="""
        [tool.feeler]
        targets = { demo = "feeler.demo.server:server" }
        samples = 3
        replay_dir = "replays"
        """,
    )
    pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-n", "2", "-k", "order_services",
                                  "--feeler-report", "reports")  # fmt: skip
    docs = sorted(Path(pytester.path, "reports").glob("*/feeler-report.json"))
    assert len(docs) == 2 and all("-gw" in p.parent.name for p in docs)  # one folder per worker
    for path in docs:
        doc = json.loads(path.read_text(encoding="utf-8"))
        assert validate_report(doc) == [] and doc["command"] == "pytest"
    out = Path(pytester.path, "merged")
    assert run(["report", "merge", *map(str, docs), "--report-dir", str(out), "--report-format", "json"]) == 1
    merged = json.loads((out / "feeler-report.json").read_text(encoding="utf-8"))
    assert validate_report(merged) == [] and len(merged["parts"]) == 2
    errors = {(f["tool"], f["kind"]) for f in merged["findings"] if f["severity"] == "error"}
    # order_services needs a booking: the no-go defect, or the values_needed hint (kind "tool") without one
    assert {("order_services", "no-go"), ("order_services", "tool")} & errors, errors
