"""Markdown, JUnit XML and SARIF 2.1.0, each rendered from the report document alone.

The table :data:`FORMATS` maps a format name to its renderer and file name; :func:`write_reports`
writes the chosen formats into one folder.
"""

from __future__ import annotations

import json
import os
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from feeler._files import write_text_atomic
from feeler.errors import UsageError

__all__ = ["FORMATS", "Format", "render", "render_json", "render_junit", "render_markdown", "render_sarif", "write_reports"]

#: GitHub caps a pull-request comment at 65,536 characters (from memory); stay below it.
MARKDOWN_LIMIT = 60_000
MARKDOWN_FINDINGS = 50


@dataclass(frozen=True)
class Format:
    name: str
    filename: str
    render: Callable[[dict[str, Any]], str]
    doc: str


def render_json(doc: dict[str, Any]) -> str:
    return json.dumps(doc, indent=2, ensure_ascii=False, sort_keys=False) + "\n"


def totals_line(doc: dict[str, Any]) -> str:
    t = doc["totals"]
    n = t["findings"]
    return f"{n} finding{'s' if n != 1 else ''} ({t['errors']} error{'s' if t['errors'] != 1 else ''}, {t['warnings']} warning{'s' if t['warnings'] != 1 else ''})"


def ms(value: float | None) -> str:
    return "-" if value is None else f"{value * 1000:.1f} ms"


def _cell(text: Any) -> str:
    return str(text).replace("|", "\\|").replace("\n", " ")


def _coverage_cell(tool: dict[str, Any]) -> str:
    cov = tool.get("coverage")
    return "-" if not cov else f"{cov['gaugedBothEnds']}/{cov['keywords']}"


def render_markdown(doc: dict[str, Any]) -> str:
    """A summary that fits a pull-request comment and a GitHub Actions step summary (GitHub-flavoured tables)."""
    t = doc["totals"]
    shard = doc.get("shard")
    head = f"## feeler {doc['command']}: {doc['target']}" + (f" (shard {shard['index']}/{shard['count']})" if shard else "")
    lines = [
        head,
        "",
        f"**{totals_line(doc)}** · {t['calls']} calls · {t['tools']} tools"
        + (f" · protocol version {doc['protocolVersion']}" if doc.get("protocolVersion") else "")
        + f" · {doc.get('durationSeconds', 0):.1f} s"
        + (f" · {t['restarts']} server restarts" if t["restarts"] else ""),
        "",
        "| tool | calls | go entered / stopped | no-go stopped / entered | findings | p50 | p95 | p99 | keywords gauged at both ends |",
        "|---|---:|---:|---:|---:|---:|---:|---:|---:|",
    ]
    for tool in doc["tools"]:
        if tool.get("skipped"):
            lines.append(f"| {_cell(tool['name'])} | skipped: {_cell(tool['skipped'])} | | | | | | | |")
            continue
        go, nogo, lat = tool["go"], tool["noGo"], tool["latency"]
        lines.append(
            f"| {_cell(tool['name'])} | {tool['calls']} | {go['entered']} / {go['stopped']} of {go['calls']}"
            f" | {nogo['stoppedByCode'] + nogo['stoppedByIsError']} / {nogo['entered']} of {nogo['calls']}"
            f" | {tool['findings']} | {ms(lat['p50'])} | {ms(lat['p95'])} | {ms(lat['p99'])} | {_coverage_cell(tool)} |"
        )
    findings = doc["findings"]
    if findings:
        lines += ["", "### Findings", ""]
        # errors first (a stable sort keeps the report's order within each severity): a cut list keeps them
        for f in sorted(findings, key=lambda f: f["severity"] != "error")[:MARKDOWN_FINDINGS]:
            where = f" `{f['tool']}`" if f.get("tool") else " the server"
            lines.append(f"- **{f['severity']}** `{f['check']}` on{where} ({f['kind']}): {_cell(f['message'])}")
            if f.get("replayCommand"):
                lines.append(f"  replay: `{f['replayCommand']}`")
        if len(findings) > MARKDOWN_FINDINGS:
            lines.append(f"- ... and {len(findings) - MARKDOWN_FINDINGS} more (see the JSON or HTML report)")
    text = "\n".join(lines) + "\n"
    if len(text) > MARKDOWN_LIMIT:
        text = text[: MARKDOWN_LIMIT - 80].rsplit("\n", 1)[0] + "\n\n... (cut to fit; see the JSON or HTML report)\n"
    return text


def render_junit(doc: dict[str, Any]) -> str:
    """JUnit XML: one testsuite per tool (plus ``server``), one testcase per case kind; errors fail it.

    The element and attribute names are the de-facto JUnit XML ones read by CI systems (common practice;
    there is no formal standard). Warnings go to ``system-out``, since JUnit has no warning state. ``time``
    is elapsed seconds: a testcase's is the time spent in that kind's calls of the tool, a testsuite's
    their sum, the root's the whole run.
    """
    from xml.etree import ElementTree as ET

    root = ET.Element("testsuites", name=f"feeler {doc['command']}: {doc['target']}")
    by_tool: dict[str, list[dict[str, Any]]] = {}
    for f in doc["findings"]:
        by_tool.setdefault(f.get("tool") or "server", []).append(f)
    names = [t["name"] for t in doc["tools"]] + (["server"] if "server" in by_tool and "server" not in {t["name"] for t in doc["tools"]} else [])
    elapsed = {t["name"]: t.get("elapsedSeconds") or {} for t in doc["tools"]}
    json_kind = {"go": "go", "no-go": "noGo", "chain": "chain"}
    total_tests = total_failures = 0
    for name in names:
        findings = by_tool.get(name, [])
        kinds = sorted({f["kind"] for f in findings} | ({"go", "no-go"} if name != "server" else {"probe"}))
        suite = ET.SubElement(root, "testsuite", name=name)
        failures = 0
        suite_time = 0.0
        for kind in kinds:
            case = ET.SubElement(suite, "testcase", classname=f"feeler.{doc['target']}.{name}", name=kind)
            if kind in json_kind and json_kind[kind] in elapsed.get(name, {}):
                seconds = elapsed[name][json_kind[kind]]  # the time spent in this kind's calls
                case.set("time", f"{seconds:.6f}")
                suite_time += seconds
            mine = [f for f in findings if f["kind"] == kind]
            errors = [f for f in mine if f["severity"] == "error"]
            if errors:
                failures += 1
                failure = ET.SubElement(case, "failure", message=errors[0]["message"][:500], type=errors[0]["check"])
                failure.text = "\n".join(f"[{f['check']}] {f['message']}" + (f"\n  {f['replayCommand']}" if f.get("replayCommand") else "") for f in errors)
            warnings = [f for f in mine if f["severity"] != "error"]
            if warnings:
                ET.SubElement(case, "system-out").text = "\n".join(f"warning [{f['check']}] {f['message']}" for f in warnings)
        suite.set("tests", str(len(kinds)))
        suite.set("failures", str(failures))
        suite.set("errors", "0")
        suite.set("time", f"{suite_time:.6f}")
        total_tests += len(kinds)
        total_failures += failures
    root.set("tests", str(total_tests))
    root.set("failures", str(total_failures))
    root.set("errors", "0")
    root.set("time", f"{float(doc.get('durationSeconds') or 0):.3f}")  # the whole run, wall clock
    ET.indent(root)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"


#: The OASIS SARIF 2.1.0 schema (errata 01), named in ``$schema`` as SARIF 2.1.0 section 3.13.3 allows.
SARIF_SCHEMA_URI = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"


def render_sarif(doc: dict[str, Any]) -> str:
    """SARIF 2.1.0 (OASIS): one run, one rule per check, one result per finding.

    Findings concern a server, not a source file, so each result has a *logical* location (SARIF 3.33):
    the tool as a ``function`` inside the target. A finding with a replay file also gets a *physical*
    location (SARIF 3.29): that file, relative to where feeler ran (SARIF 3.4.3 ``uriBaseId``
    ``%SRCROOT%``), line 1, since code-scanning dashboards place a result in a file (GitHub code scanning
    shows results by file and line; from memory of its "SARIF support" page). The replay file is what a
    reader opens to reproduce the finding, so it is an honest place; nothing points into server source.
    """
    from feeler.check.registry import CHECKS

    rules: list[dict[str, Any]] = []
    index: dict[str, int] = {}
    results = []
    for f in doc["findings"]:
        check = f["check"]
        if check not in index:
            index[check] = len(rules)
            known = CHECKS.get(check)
            rule: dict[str, Any] = {"id": check, "name": check, "shortDescription": {"text": (known.doc if known else check) or check}}
            if known is not None and getattr(known, "reference", None):
                rule["help"] = {"text": f"Reference: {known.reference}"}
            rule["defaultConfiguration"] = {"level": "error" if (known.severity if known else f["severity"]) == "error" else "warning"}
            rules.append(rule)
        name = f.get("tool") or "(server)"
        message = f["message"] + (f" Replay: {f['replayCommand']}" if f.get("replayCommand") else "")
        result: dict[str, Any] = {
            "ruleId": check,
            "ruleIndex": index[check],
            "level": "error" if f["severity"] == "error" else "warning",
            "message": {"text": message},
            "locations": [_location(f, name, doc["target"])],
            "partialFingerprints": {"feelerSignature/v1": f["signature"]},
            "occurrenceCount": f.get("count", 1),
            "properties": {k: f[k] for k in ("kind", "keyword", "keywordLocation", "instanceLocation", "arguments", "replay") if f.get(k) is not None},
        }
        results.append(result)
    from feeler import __version__

    sarif = {
        "$schema": SARIF_SCHEMA_URI,
        "version": "2.1.0",
        "runs": [
            {
                "tool": {"driver": {"name": "feeler", "version": __version__, "rules": rules}},
                "automationDetails": {"id": f"feeler/{doc['command']}/{doc['target']}/"},
                "invocations": [{"executionSuccessful": True, "startTimeUtc": doc["startedAt"], "endTimeUtc": doc["finishedAt"]}],
                "results": results,
            }
        ],
    }
    return json.dumps(sarif, indent=2, ensure_ascii=False) + "\n"


def _location(finding: dict[str, Any], name: str, target: str) -> dict[str, Any]:
    location: dict[str, Any] = {"logicalLocations": [{"name": name, "fullyQualifiedName": f"{target}/{name}", "kind": "function"}]}
    replay = finding.get("replay")
    if replay:
        from pathlib import Path
        from urllib.parse import quote

        if os.path.isabs(replay):  # outside the project: an absolute file URI (SARIF 3.10.3)
            artifact = {"uri": Path(replay).as_uri()}
        else:
            uri = quote("/".join(part for part in replay.replace(os.sep, "/").split("/") if part not in ("", ".")), safe="/")
            artifact = {"uri": uri, "uriBaseId": "%SRCROOT%"}
        location["physicalLocation"] = {"artifactLocation": artifact, "region": {"startLine": 1}}
    return location


def _render_html(doc: dict[str, Any]) -> str:
    from feeler.report.html import render_html

    return render_html(doc)


#: format name -> how it is rendered and the file it is written to
FORMATS: dict[str, Format] = {
    f.name: f
    for f in (
        Format("json", "feeler-report.json", render_json, "the report document (schema: feeler/report/schema/report.schema.json)"),
        Format("markdown", "feeler-report.md", render_markdown, "a pull-request comment or GitHub Actions step summary"),
        Format("junit", "feeler-junit.xml", render_junit, "JUnit XML for CI test views"),
        Format("sarif", "feeler.sarif", render_sarif, "SARIF 2.1.0 for code-scanning dashboards"),
        Format("html", "feeler-report.html", _render_html, "one self-contained HTML page"),
    )
}


def render(doc: dict[str, Any], fmt: str) -> str:
    if fmt not in FORMATS:
        raise UsageError(f"unknown report format {fmt!r}: choose from {', '.join(FORMATS)}")
    return FORMATS[fmt].render(doc)


def write_reports(doc: dict[str, Any], folder: str, formats: list[str] | tuple[str, ...] | None = None) -> list[str]:
    """Write *doc* in each of *formats* (default: all) into *folder*; return the paths written."""
    paths = []
    for fmt in formats or list(FORMATS):
        path = os.path.join(folder, FORMATS[fmt].filename) if fmt in FORMATS else ""
        text = render(doc, fmt)
        write_text_atomic(path, text)
        os.chmod(path, 0o644)  # a report is read by people and CI uploaders (the temp file was 0600)
        paths.append(path)
    return paths
