"""Turning a run into text for people (grouped by tool) or JSON for machines."""

from __future__ import annotations

import json
from typing import Any

from feeler.check.runner import RunReport

__all__ = ["report_json", "report_text", "totals_line", "totals_words"]


def _median(values: list[float]) -> float:
    ordered = sorted(values)
    return ordered[len(ordered) // 2] if ordered else 0.0


def report_text(report: RunReport, *, verbose: bool = False) -> str:
    """The terminal report: a header, then one block per tool with its counters and findings."""
    cat = report.catalog
    lines: list[str] = []
    if cat is not None:
        server = cat.server.get("name", "?")
        lines.append(f"feeler check: {report.target.name} ({server}, protocol version {cat.revision}, {cat.era} era)")
    by_tool: dict[str | None, list[Any]] = {}
    shared = [f for f in report.findings if len(f.tools) > 1]
    for finding in report.findings:
        if len(finding.tools) <= 1:
            by_tool.setdefault(finding.tool, []).append(finding)
    for name, stats in sorted(report.tools.items()):
        flags = [] if stats.annotated else ["no annotations"]
        head = f"\n{name}" + (f"  [{', '.join(flags)}]" if flags else "")
        lines.append(head)
        if stats.skipped:
            lines.append(f"  skipped: {stats.skipped}")
        else:
            if stats.schema_problem:
                lines.append(f"  no cases: {stats.schema_problem}")
            lines.append(
                f"  go: {stats.go_entered}/{stats.go_calls} entered"
                + (f", {stats.go_is_error} answered isError" if stats.go_is_error else "")
                + f"; no-go: {stats.nogo_stopped_protocol + stats.nogo_stopped_is_error}/{stats.nogo_calls} stopped"
                + f"; probes: {stats.probes}"
                + (f"; median {_median(stats.durations) * 1000:.1f} ms" if stats.durations else "")
            )
            if stats.go_calls or stats.nogo_calls:
                lines.append(f"  {stats.world.summary_text()}")
                if stats.learned_from:
                    top = sorted(stats.learned_from.items(), key=lambda kv: -kv[1])[:3]
                    lines.append("  learned from: " + ", ".join(f"{where} ({n})" for where, n in top))
            if stats.nogo_calls:
                lines.append(f"  stops no-go cases with {stats.rejection_style(report.revision)}")
            cov = stats.coverage_summary()
            if cov:
                gaps = ", ".join(f"{g['keywordLocation'] or '/'}" for g in cov["gaps"][:4])
                more = f" (+{len(cov['gaps']) - 4} more)" if len(cov["gaps"]) > 4 else ""
                lines.append(
                    f"  keywords: {cov['gaugedBothEnds']}/{cov['keywords']} gauged at both ends"
                    + (f"; not at both ends: {gaps}{more}" if gaps and verbose else "")
                )
        for finding in by_tool.pop(name, []):
            lines.extend(_finding_lines(finding, verbose))
    if shared:
        lines.append("\nseveral tools (one finding each, the same on every tool listed)")
        for finding in shared:
            lines.extend(_finding_lines(finding, verbose))
    rest = [f for tool_findings in by_tool.values() for f in tool_findings]
    if rest:
        lines.append("\nserver")
        for finding in rest:
            lines.extend(_finding_lines(finding, verbose))
    lines.append(
        "\n" + totals_line(report.findings)
        + (f", {report.restarts} server restart{'s' if report.restarts != 1 else ''}" if report.restarts else "")
    )
    return "\n".join(lines) + "\n"


def totals_line(findings: Any) -> str:
    """``N findings (E errors, W warnings)``: warnings are findings too."""
    return totals_words(len(findings), len(findings.errors()))


def totals_words(total: int, errors: int) -> str:
    """``N findings (E errors, W warnings)`` for *total* findings of which *errors* are errors."""
    warnings = total - errors
    return (
        f"{total} finding{'s' if total != 1 else ''} "
        f"({errors} error{'s' if errors != 1 else ''}, {warnings} warning{'s' if warnings != 1 else ''})"
    )


def _finding_lines(finding: Any, verbose: bool) -> list[str]:
    mark = "FINDING" if finding.severity == "error" else "warning"
    out = [f"  {mark} [{finding.check}] ({finding.kind}) {finding.message}"]
    if len(finding.tools) > 1:
        names = ", ".join(finding.tools[:12]) + (f" (+{len(finding.tools) - 12} more)" if len(finding.tools) > 12 else "")
        out.append(f"      on {len(finding.tools)} tools: {names}")
    if finding.keyword_location:
        out.append(f"      keywordLocation: {finding.keyword_location}  instanceLocation: {finding.instance_location!r}")
    if finding.arguments is not None and finding.kind in ("go", "no-go"):
        args = json.dumps(finding.arguments, ensure_ascii=False)
        out.append(f"      arguments: {args if len(args) <= 200 or verbose else args[:197] + '...'}")
    if finding.count > 1:
        out.append(f"      seen {finding.count} times")
    if finding.replay:
        out.append(f"      replay: feeler replay {finding.replay}")
    return out


def report_json(report: RunReport) -> str:
    """Machine-readable report; the finding fields are documented on :class:`~feeler.check.findings.Finding`."""
    cat = report.catalog
    data = {
        "target": report.target.name,
        "protocolVersion": cat.revision if cat else None,
        "era": cat.era if cat else None,
        "server": cat.server if cat else None,
        "tools": {
            name: {
                "skipped": s.skipped,
                "annotated": s.annotated,
                **s.counters(),
                "probes": s.probes,
                "timeouts": s.timeouts,
                "medianSeconds": _median(s.durations),
                "schemaProblem": s.schema_problem,
                "coverage": s.coverage_summary(),
                **s.world.summary(),
                "learnedFrom": dict(sorted(s.learned_from.items())),
            }
            for name, s in sorted(report.tools.items())
        },
        "findings": [f.to_json() for f in report.findings],
        "restarts": report.restarts,
        "planned": [c.to_json() for c in report.planned],
    }
    return json.dumps(data, indent=2, ensure_ascii=False, default=str) + "\n"
