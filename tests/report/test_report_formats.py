"""The report document and every format rendered from it, from a real ``feeler check`` of the demo.

References: the report's own JSON Schema (shipped in the package, Draft 2020-12) checked with `jsonschema`
as the reference validator; the OASIS SARIF 2.1.0 JSON Schema (errata 01, tests/report/schemas/) with
`jsonschema`'s Draft 4 validator; JUnit XML element names as CI systems read them (common practice: no
formal standard); GitHub-flavoured Markdown tables (GFM spec, "Tables (extension)").
"""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any
from urllib.parse import unquote, urlsplit
from xml.etree import ElementTree as ET

import pytest
from jsonschema import Draft4Validator

from feeler.cli import run
from feeler.report import FORMATS, merge_reports, render, report_schema, validate_report

SARIF_SCHEMA = Path(__file__).parent / "schemas" / "sarif-schema-2.1.0.json"


def test_check_writes_every_format(checked: dict[str, Any]) -> None:
    assert checked["code"] == 1  # the demo's planted defects are findings
    written = sorted(p.name for p in checked["folder"].iterdir())
    assert written == sorted(f.filename for f in FORMATS.values())


def test_json_report_matches_its_schema(checked: dict[str, Any]) -> None:
    """Reference: report.schema.json (JSON Schema 2020-12), validated by `jsonschema`."""
    doc = checked["doc"]
    assert report_schema()["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert validate_report(doc) == []
    assert {t["name"] for t in doc["tools"]} == {"list_berths", "order_services"}
    assert doc["totals"]["findings"] == len(doc["findings"]) > 0
    assert doc["totals"]["calls"] == sum(t["go"]["calls"] + t["noGo"]["calls"] + t["chainCalls"] for t in doc["tools"])
    # The validation can fail: a document without totals, or with an unknown severity, is refused.
    broken = copy.deepcopy(doc)
    del broken["totals"]
    broken["findings"][0]["severity"] = "fatal"
    problems = validate_report(broken)
    assert any("totals" in p for p in problems) and any("fatal" in p for p in problems)


def test_latency_percentiles_are_ordered(checked: dict[str, Any]) -> None:
    for tool in checked["doc"]["tools"]:
        lat = tool["latency"]
        assert lat["count"] == sum(b["count"] for b in lat["buckets"]) > 0
        assert 0 < lat["p50"] <= lat["p95"] <= lat["p99"] <= lat["max"]


def test_sarif_matches_the_sarif_2_1_0_schema(checked: dict[str, Any]) -> None:
    """Reference: OASIS SARIF 2.1.0 JSON Schema (errata 01), `jsonschema` Draft 4 validator."""
    schema = json.loads(SARIF_SCHEMA.read_text(encoding="utf-8"))
    sarif = json.loads((checked["folder"] / "feeler.sarif").read_text(encoding="utf-8"))
    errors = [e.message for e in Draft4Validator(schema, format_checker=Draft4Validator.FORMAT_CHECKER).iter_errors(sarif)]
    assert errors == []
    results = sarif["runs"][0]["results"]
    assert len(results) == len(checked["doc"]["findings"])
    rules = sarif["runs"][0]["tool"]["driver"]["rules"]
    assert all(rules[r["ruleIndex"]]["id"] == r["ruleId"] for r in results)  # SARIF 3.27.6 ruleIndex
    # A finding with a replay file is placed in that file (SARIF 3.29 physicalLocation, 3.4.3 uriBaseId).
    by_signature = {f["signature"]: f for f in checked["doc"]["findings"]}
    placed = 0
    for result in results:
        finding = by_signature[result["partialFingerprints"]["feelerSignature/v1"]]
        physical = result["locations"][0].get("physicalLocation")
        if finding.get("replay"):
            placed += 1
            artifact = physical["artifactLocation"]
            if artifact.get("uriBaseId") == "%SRCROOT%":  # a replay folder inside the project
                where = Path.cwd() / unquote(artifact["uri"])
            else:  # elsewhere (this fixture's tmp folder): an absolute file URI (RFC 8089)
                assert urlsplit(artifact["uri"]).scheme == "file"
                where = Path(unquote(urlsplit(artifact["uri"]).path))
            assert where.resolve() == Path(finding["replay"]).resolve() and where.is_file()
            assert physical["region"]["startLine"] == 1
        else:
            assert physical is None  # nothing to point at: the logical location alone
    assert placed
    # The validator is not blind: a result with an unknown level is refused.
    sarif["runs"][0]["results"][0]["level"] = "fatal"
    assert list(Draft4Validator(schema).iter_errors(sarif))


def test_junit_fails_exactly_the_cases_with_errors(checked: dict[str, Any]) -> None:
    """JUnit XML as CI systems read it (common practice): testsuites/testsuite/testcase/failure."""
    root = ET.fromstring((checked["folder"] / "feeler-junit.xml").read_text(encoding="utf-8"))
    doc = checked["doc"]
    failing = {(f.get("tool") or "server", f["kind"]) for f in doc["findings"] if f["severity"] == "error"}
    seen = set()
    for suite in root.iter("testsuite"):
        tool = suite.get("name")
        for case in suite.iter("testcase"):
            if case.find("failure") is not None:
                seen.add((tool, case.get("name")))
    assert seen == failing and failing
    # time is elapsed seconds (common practice: the testcase's run time): a go testcase's is the time of
    # the tool's go calls, the suite's the sum of its testcases, the root's the whole run.
    tools = {t["name"]: t for t in doc["tools"]}
    for suite in root.iter("testsuite"):
        cases = {c.get("name"): c for c in suite.iter("testcase")}
        if suite.get("name") in tools and "go" in cases:
            spent = tools[suite.get("name")]["elapsedSeconds"]["go"]
            assert float(cases["go"].get("time")) == pytest.approx(spent, abs=1e-6) and spent > 0
            assert spent < doc["durationSeconds"]
        assert float(suite.get("time")) == pytest.approx(sum(float(c.get("time") or 0) for c in cases.values()), abs=1e-5)
    assert float(root.get("time")) == pytest.approx(doc["durationSeconds"], abs=1e-3)
    assert int(root.get("failures", "0")) == len(failing)


def test_markdown_summary(checked: dict[str, Any]) -> None:
    """GFM tables: a header row, a delimiter row, one row per tool."""
    text = (checked["folder"] / "feeler-report.md").read_text(encoding="utf-8")
    lines = text.splitlines()
    header = next(i for i, line in enumerate(lines) if line.startswith("| tool |"))
    assert set(lines[header + 1].replace("|", "").replace("-", "").replace(":", "")) <= {" ", ""}
    rows = [line for line in lines[header + 2 :] if line.startswith("| ")]
    assert [r.split("|")[1].strip() for r in rows] == [t["name"] for t in checked["doc"]["tools"]]
    assert all(r.count("|") == lines[header].count("|") for r in rows)
    for f in checked["doc"]["findings"]:
        if f.get("replayCommand"):
            assert f"`{f['replayCommand']}`" in text
    assert len(text) < 60_000
    listed = [line.split("**")[1] for line in lines if line.startswith("- **")]
    assert listed == sorted(listed, key=lambda severity: severity != "error")  # errors first: a cut list keeps them
    assert "error" in listed and "warning" in listed  # the demo has both, so the order was really tested


def test_merge_joins_parts(checked: dict[str, Any], tmp_path: Path) -> None:
    """Two shard documents (one tool each) merge back into the whole: totals add up, schema holds."""
    doc = checked["doc"]
    parts = []
    for i, tool in enumerate(doc["tools"], start=1):
        part = copy.deepcopy(doc)
        part["tools"] = [tool]
        part["findings"] = [f for f in doc["findings"] if f.get("tool") == tool["name"] or (i == 1 and not f.get("tool"))]
        part["shard"] = {"index": i, "count": len(doc["tools"])}
        parts.append(part)
    merged = merge_reports(parts)
    assert validate_report(merged) == []
    assert merged["totals"]["calls"] == doc["totals"]["calls"]
    assert sorted(f["signature"] for f in merged["findings"]) == sorted(f["signature"] for f in doc["findings"])
    # The same part twice (two workers on one tool): counters double, findings stay, counts double.
    twice = merge_reports([parts[0], parts[0]])
    assert twice["tools"][0]["calls"] == 2 * parts[0]["tools"][0]["calls"]
    assert twice["tools"][0]["latency"]["count"] == 2 * parts[0]["tools"][0]["latency"]["count"]
    assert [f["count"] for f in twice["findings"]] == [2 * f["count"] for f in sorted(parts[0]["findings"], key=lambda f: (f.get("tool") or "", f["check"], f["signature"]))]
    # And through the command line.
    files = []
    for i, part in enumerate(parts):
        path = tmp_path / f"part{i}.json"
        path.write_text(render(part, "json"), encoding="utf-8")
        files.append(str(path))
    out = tmp_path / "merged"
    assert run(["report", "merge", *files, "--report-dir", str(out), "--report-format", "json"]) == 1
    assert validate_report(json.loads((out / "feeler-report.json").read_text(encoding="utf-8"))) == []


def test_merge_keeps_the_campaign_block(checked: dict[str, Any]) -> None:
    """Shards of one campaign merge into one campaign summary: the longest budget, the rounds all finished."""
    parts = []
    for index, (budget, rounds) in enumerate(((60.0, 4), (60.0, 3)), start=1):
        part = copy.deepcopy(checked["doc"])
        part.update(command="campaign", shard={"index": index, "count": 2})
        part["campaign"] = {"budgetSeconds": budget, "rounds": rounds, "resumed": index - 1,
                            "callLog": f".feeler/campaigns/x-shard-{index}-of-2/calls.jsonl", "exampleDatabase": ".feeler/examples"}
        parts.append(part)
    merged = merge_reports(parts)
    assert validate_report(merged) == []
    assert merged["campaign"] == {"budgetSeconds": 60.0, "rounds": 3, "resumed": 1, "callLog": None,
                                  "exampleDatabase": ".feeler/examples"}
    assert "campaign" not in merge_reports([checked["doc"]])  # a check has none
