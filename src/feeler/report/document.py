"""The report document: built from a run, validated against the shipped JSON Schema."""

from __future__ import annotations

import bisect
import json
import math
from datetime import datetime, timezone
from importlib import resources
from typing import TYPE_CHECKING, Any

from feeler.errors import UsageError

if TYPE_CHECKING:
    from feeler.check.runner import RunReport, ToolStats

__all__ = ["LATENCY_BOUNDS", "REPORT_FORMAT", "build_report", "latency_summary", "load_report", "report_schema", "validate_report"]

REPORT_FORMAT = "feeler-report/1"
#: Upper bounds (seconds) of the latency histogram; the same in every report so that reports merge exactly.
LATENCY_BOUNDS: tuple[float, ...] = (
    0.0005, 0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0, 30.0,
)  # fmt: skip


def now_iso() -> str:
    return datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def _percentile(ordered: list[float], q: float) -> float | None:
    # Nearest rank (common practice): the smallest value with at least q of the values at or below it.
    if not ordered:
        return None
    return ordered[max(0, math.ceil(q * len(ordered)) - 1)]


def latency_summary(durations: list[float], stats: ToolStats | None = None) -> dict[str, Any]:
    """Count, p50/p95/p99, max and the fixed-bound histogram of *durations* (seconds).

    With *stats* (a tool's counters), count, max and the histogram are those of every call, and
    *durations* is the tool's bounded uniform sample: the percentiles are read from it and marked
    ``approximate`` once the calls outnumber the sample."""
    ordered = sorted(durations)
    counts = [0] * (len(LATENCY_BOUNDS) + 1)
    count, top = len(ordered), (ordered[-1] if ordered else None)
    if stats is not None and stats.latency_count:
        counts, count, top = list(stats.latency_buckets), stats.latency_count, stats.latency_max
    else:
        for value in ordered:
            counts[bisect.bisect_left(LATENCY_BOUNDS, value)] += 1
    out = {
        "count": count,
        "p50": _percentile(ordered, 0.50),
        "p95": _percentile(ordered, 0.95),
        "p99": _percentile(ordered, 0.99),
        "max": top,
        "buckets": [{"le": bound, "count": n} for bound, n in zip((*LATENCY_BOUNDS, None), counts)],
    }
    if count > len(ordered):
        out["approximate"] = True
    return out


def _tool(stats: ToolStats, findings: int) -> dict[str, Any]:
    return {
        "name": stats.name,
        "skipped": stats.skipped,
        "annotated": stats.annotated,
        "schemaProblem": stats.schema_problem,
        "calls": stats.go_calls + stats.nogo_calls + stats.chain_calls,
        "chainCalls": stats.chain_calls,
        "elapsedSeconds": {
            "go": round(stats.seconds.get("go", 0.0), 6),
            "noGo": round(stats.seconds.get("no-go", 0.0), 6),
            "chain": round(stats.seconds.get("chain", 0.0), 6),
        },
        **stats.counters(),
        "probes": stats.probes,
        "timeouts": stats.timeouts,
        "findings": findings,
        "latency": latency_summary(stats.durations, stats),
        "coverage": stats.coverage_summary(),
    }


def _finding(finding: Any) -> dict[str, Any]:
    data = dict(finding.to_json())
    data.setdefault("signature", finding.signature)
    replay = data.get("replay")
    data["replayCommand"] = f"feeler replay {replay}" if replay else None
    return data


def build_report(
    run: RunReport,
    *,
    command: str = "check",
    started_at: str | None = None,
    finished_at: str | None = None,
    duration: float | None = None,
    shard: tuple[int, int] | None = None,
    campaign: dict[str, Any] | None = None,
) -> dict[str, Any]:
    """The report document of *run* (a :class:`~feeler.check.runner.RunReport`)."""
    from feeler import __version__

    cat = run.catalog
    findings = [_finding(f) for f in run.findings]
    per_tool: dict[str | None, int] = {}
    for f in findings:
        per_tool[f.get("tool")] = per_tool.get(f.get("tool"), 0) + 1
    tools = [_tool(s, per_tool.get(name, 0)) for name, s in sorted(run.tools.items())]
    errors = sum(1 for f in findings if f["severity"] == "error")
    finished = finished_at or now_iso()
    doc: dict[str, Any] = {
        "format": REPORT_FORMAT,
        "feelerVersion": __version__,
        "command": command,
        "target": run.target.name,
        "server": dict(cat.server) if cat else None,
        "protocolVersion": cat.revision if cat else None,
        "era": cat.era if cat else None,
        "startedAt": started_at or finished,
        "finishedAt": finished,
        "durationSeconds": round(duration, 3) if duration is not None else 0.0,
        "shard": {"index": shard[0], "count": shard[1]} if shard else None,
        "totals": {
            "calls": sum(t["calls"] for t in tools),
            "findings": len(findings),
            "errors": errors,
            "warnings": len(findings) - errors,
            "tools": len(tools),
            "restarts": run.restarts,
        },
        "tools": tools,
        "findings": findings,
    }
    if campaign is not None:
        doc["campaign"] = campaign
    return doc


def report_schema() -> dict[str, Any]:
    """The JSON Schema (2020-12) of the report document, as shipped in the package."""
    text = resources.files("feeler.report").joinpath("schema/report.schema.json").read_text(encoding="utf-8")
    return json.loads(text)  # type: ignore[no-any-return]


def validate_report(doc: Any) -> list[str]:
    """Problems of *doc* against the report schema (``jsonschema``, Draft 2020-12); empty when valid."""
    from jsonschema import Draft202012Validator

    validator = Draft202012Validator(report_schema(), format_checker=Draft202012Validator.FORMAT_CHECKER)
    return [f"{'/'.join(map(str, e.absolute_path)) or '(root)'}: {e.message}" for e in validator.iter_errors(doc)]


def load_report(path: str) -> dict[str, Any]:
    """Read a report document; a user-facing error if it is not one."""
    from feeler._read import read_json

    doc = read_json(path, what="the report", expect=None, fix="give a report file written by feeler")
    if not isinstance(doc, dict) or doc.get("format") != REPORT_FORMAT:
        raise UsageError(f"{path}: not a feeler report (expected format {REPORT_FORMAT!r}); write one with --report-dir")
    try:  # the shipped schema (report/schema/report.schema.json): renderers and merge rely on its shape
        problems = validate_report(doc)
    except RecursionError:
        problems = ["(root): nested too deeply"]
    if problems:
        first = " ".join(problems[0].split())[:200]
        more = f" (and {len(problems) - 1} more)" if len(problems) > 1 else ""
        raise UsageError(f"{path}: not a valid feeler report: {first}{more}; give a report file written by feeler "
                         "(--report-dir), unedited")
    return doc
