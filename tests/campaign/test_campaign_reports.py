"""Every report a campaign writes, checked against its reference schema.

References: the report's JSON Schema (Draft 2020-12, shipped in the package) with `jsonschema`; the OASIS
SARIF 2.1.0 JSON Schema (errata 01, tests/report/schemas/) with `jsonschema`'s Draft 4 validator; the demo's
planted defects (tests/demo_defects.py) as the answer key for the long run.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import pytest
from campaign_helpers import SERVER, TOOLS
from jsonschema import Draft4Validator

from feeler.cli import run
from feeler.report import FORMATS, validate_report

TESTS = Path(__file__).resolve().parents[1]
SARIF_SCHEMA = TESTS / "report" / "schemas" / "sarif-schema-2.1.0.json"


def _check_reports(folder: Path) -> dict:
    assert sorted(p.name for p in folder.iterdir()) == sorted(f.filename for f in FORMATS.values())
    doc = json.loads((folder / "feeler-report.json").read_text(encoding="utf-8"))
    assert validate_report(doc) == []
    sarif = json.loads((folder / "feeler.sarif").read_text(encoding="utf-8"))
    schema = json.loads(SARIF_SCHEMA.read_text(encoding="utf-8"))
    # SARIF 2.1.0's schema is draft-04; its "format": "uri" / "date-time" are checked too (jsonschema's
    # format checker, with the checkers of jsonschema's format-nongpl extra, a feeler dependency)
    checker = Draft4Validator.FORMAT_CHECKER
    assert {"date-time", "uri"} <= set(checker.checkers)
    assert [e.message for e in Draft4Validator(schema, format_checker=checker).iter_errors(sarif)] == []
    assert len(sarif["runs"][0]["results"]) == len(doc["findings"])
    assert doc["command"] == "campaign" and doc["campaign"]["budgetSeconds"] > 0
    return doc


def test_short_campaign_writes_every_report(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    code = run(["campaign", "--budget", "8s", "--report-dir", str(tmp_path / "reports"), "--", sys.executable, str(SERVER)])
    doc = _check_reports(tmp_path / "reports")
    assert code == (1 if doc["totals"]["errors"] else 0)
    assert {t["name"] for t in doc["tools"]} <= set(TOOLS)
    assert doc["campaign"]["exampleDatabase"] == ".feeler/examples" and (tmp_path / ".feeler" / "examples").is_dir()


def test_two_minute_campaign_finds_every_planted_defect(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    sys.path.insert(0, str(TESTS))
    from demo_defects import DEFECTS

    monkeypatch.chdir(tmp_path)
    code = run(["campaign", "--budget", "2m", "--report-dir", str(tmp_path / "reports"), "--", sys.executable, "-m", "feeler.demo"])
    assert code == 1
    doc = _check_reports(tmp_path / "reports")
    errors = {(f["tool"], f["kind"]) for f in doc["findings"] if f["severity"] == "error"}
    for defect in DEFECTS:
        assert (defect.tool, defect.case_kind) in errors, defect.key
    assert doc["campaign"]["rounds"] >= 1  # it went past round 0: more drawn cases than a check
