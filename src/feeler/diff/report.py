"""Render a :class:`~feeler.diff.catalog.DiffReport` as plain text, Markdown or JSON."""

from __future__ import annotations

import json
from collections.abc import Callable

from feeler._json import canonical_dumps
from feeler.diff.catalog import DiffReport
from feeler.diff.model import Change, Verdict

__all__ = ["FORMATS", "render"]

_LABEL = {
    Verdict.BREAKING: "BREAKING",
    Verdict.LIKELY_BREAKING: "LIKELY BREAKING",
    Verdict.REVIEW: "review",
    Verdict.COMPATIBLE: "compatible",
}


def _where(c: Change) -> str:
    parts = [c.subject or "-", c.direction.value]
    if c.instance_location:
        parts.append(f"at {c.instance_location}")
    return " ".join(parts)


def _witness(c: Change) -> str:
    return json.dumps(c.witness, sort_keys=True, ensure_ascii=False)


def _summary(report: DiffReport) -> str:
    counts = {v: sum(1 for c in report.changes if c.verdict is v) for v in Verdict}
    parts = [f"{n} {_LABEL[v].lower()}" for v, n in counts.items() if n]
    return f"{len(report.changes)} change(s): {', '.join(parts) or 'none'}; semver bump: {report.bump}"


def text(report: DiffReport) -> str:
    lines = [f"feeler diff: {report.old_label} -> {report.new_label}"]
    for c in report.changes:
        label = _LABEL[c.verdict] + (", blocks release" if c.blocks else "")
        lines.append(f"  [{label}] {_where(c)}: {c.message} ({c.rule}, {c.bump})")
        if c.hint:
            lines.append(f"      hint: {c.hint}")
        if c.has_witness:
            lines.append(f"      witness: {_witness(c)}")
        if c.reason:
            lines.append(f"      why: {c.reason}")
        if c.verdict is Verdict.COMPATIBLE and c.samples_tried:
            lines.append(f"      {c.samples_tried} sample(s) tried, none broke")
    lines.append(_summary(report))
    return "\n".join(lines) + "\n"


def _md_cell(s: str) -> str:
    return s.replace("|", "\\|").replace("\n", " ")


def markdown(report: DiffReport) -> str:
    """Markdown for a pull-request comment or a CI step summary: headline, then a table."""
    icon = "breaking changes" if report.breaking else ("a review blocks release" if report.exit_code else "no breaking changes")
    lines = [f"### feeler diff: {icon} (semver: **{report.bump}**)", "",
             f"`{_md_cell(report.old_label)}` → `{_md_cell(report.new_label)}`: {_summary(report)}", ""]
    if report.changes:
        lines += ["| verdict | subject | direction | where | change | bump |", "|---|---|---|---|---|---|"]
        for c in report.changes:
            lines.append(f"| {_LABEL[c.verdict]} | `{_md_cell(c.subject)}` | {c.direction.value} | "
                         f"`{_md_cell(c.instance_location or '-')}` | {_md_cell(c.message)} | {c.bump} |")
        proofs = [c for c in report.changes if c.has_witness or c.reason or c.hint]
        if proofs:
            lines += ["", "<details><summary>Witnesses and reasons</summary>", ""]
            for c in proofs:
                bits = [f"- `{_md_cell(c.subject)}` {_md_cell(c.message)}"]
                if c.has_witness:
                    bits.append(f"  witness: `{_md_cell(_witness(c))}`")
                if c.reason:
                    bits.append(f"  why: {_md_cell(c.reason)}")
                if c.hint:
                    bits.append(f"  hint: {_md_cell(c.hint)}")
                lines += bits
            lines += ["", "</details>"]
    return "\n".join(lines) + "\n"


def json_(report: DiffReport) -> str:
    return canonical_dumps(report.to_json())


FORMATS: dict[str, Callable[[DiffReport], str]] = {"text": text, "markdown": markdown, "json": json_}


def render(report: DiffReport, fmt: str = "text") -> str:
    """Render *report* in *fmt* (one of :data:`FORMATS`)."""
    return FORMATS[fmt](report)
