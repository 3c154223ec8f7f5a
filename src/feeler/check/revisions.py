"""The same server checked under each protocol revision it speaks, and a table of what passed where."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import replace
from typing import Any

import click

from feeler.check.registry import CHECKS
from feeler.check.runner import RunOptions, RunReport, Runner
from feeler.connect import connected
from feeler.errors import HandshakeError, TargetError
from feeler.revisions import HANDSHAKE_REVISIONS, KNOWN_REVISIONS, STATELESS_REVISIONS

__all__ = ["check_every_revision", "revision_table", "supported_revisions"]


def supported_revisions(opts: Any) -> list[str]:
    """Revisions the server agrees to: each handshake revision is tried pinned; stateless ones come
    from ``server/discover``'s ``supportedVersions``."""
    out: list[str] = []
    session_options = {k: v for k, v in opts.session.items() if k != "revision"}
    for revision in KNOWN_REVISIONS:
        try:
            with connected(opts.target, revision=revision, **{**session_options, "timeout": min(session_options.get("timeout", 30.0), 10.0)}) as session:
                if session.revision == revision:
                    out.append(revision)
        except HandshakeError:
            continue
        except TargetError:
            if revision in STATELESS_REVISIONS or revision in HANDSHAKE_REVISIONS:
                continue
    return out


def revision_table(reports: dict[str, RunReport]) -> str:
    """Rows: checks; columns: revisions; cells: ``pass`` or the number of findings."""
    revisions = list(reports)
    names = sorted(CHECKS)
    width = max(len(n) for n in names) + 2
    lines = ["check".ljust(width) + "".join(r.ljust(13) for r in revisions)]
    for name in names:
        cells = []
        for revision in revisions:
            count = sum(1 for f in reports[revision].findings if f.check == name and f.severity == "error")
            cells.append(("pass" if count == 0 else f"{count} found").ljust(13))
        lines.append(name.ljust(width) + "".join(cells))
    return "\n".join(lines) + "\n"


def check_every_revision(opts: Any, options: RunOptions, *, fmt: str, progress: Callable[[str], None] | None) -> int:
    """Run the checks once per supported revision; print one report per revision and the table."""
    import json

    from feeler.check.report import report_json, report_text

    revisions = supported_revisions(opts)
    if not revisions:
        raise HandshakeError("the server agreed to none of the known protocol versions", target=opts.target.name)
    reports: dict[str, RunReport] = {}
    for revision in revisions:
        if progress:
            progress(f"== protocol version {revision}")
        session_options = {**opts.session, "revision": revision}
        reports[revision] = Runner(opts.target, replace(options), session_options=session_options, progress=progress).run()
    if fmt == "json":
        click.echo(json.dumps({r: json.loads(report_json(rep)) for r, rep in reports.items()}, indent=2))
    else:
        for revision, report in reports.items():
            click.echo(f"== {revision}")
            click.echo(report_text(report), nl=False)
        click.echo("\nchecks by protocol version")
        click.echo(revision_table(reports), nl=False)
    return max(report.exit_code() for report in reports.values())
