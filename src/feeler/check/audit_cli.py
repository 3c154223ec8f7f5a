"""``feeler audit TARGET``: the catalog checks alone (what the server advertises; no tool is called)."""

from __future__ import annotations

import json
from typing import Any

import click

from feeler.cli_options import ConnectOptions, target_options

__all__ = ["audit", "audit_text"]


def audit_text(report: Any) -> str:
    """The audit as text: findings per tool (a finding shared by several tools once), then the totals."""
    from feeler.check.audit import estimate_tokens

    cat = report.catalog
    lines = []
    if cat is not None:
        lines.append(f"feeler audit: {report.target.name} ({cat.server.get('name', '?')}, protocol version "
                     f"{cat.revision}): {len(cat.tools)} tools, about {estimate_tokens(cat.tools)} tokens")
    groups: dict[str, list[Any]] = {}
    for finding in report.findings:
        key = finding.tool if len(finding.tools) == 1 else ("catalog" if not finding.tools else ", ".join(finding.tools))
        groups.setdefault(key or "catalog", []).append(finding)
    for key in sorted(groups):
        lines.append(f"\n{key}")
        for f in groups[key]:
            lines.append(f"  {'error' if f.severity == 'error' else 'warning'} [{f.check}] {f.message}")
    errors = len(report.findings.errors())
    total = len(report.findings)
    lines.append(f"\n{total} finding{'s' if total != 1 else ''} ({errors} error{'s' if errors != 1 else ''}, "
                 f"{total - errors} warning{'s' if total - errors != 1 else ''})")
    return "\n".join(lines) + "\n"


@click.command("audit")
@target_options
@click.option("--only-check", "only_checks", multiple=True, metavar="NAME", help="Run only these catalog checks (repeatable).")
@click.option("--skip-check", "skip_checks", multiple=True, metavar="NAME", help="Do not run this check (repeatable).")
@click.option("--max-tools", type=click.IntRange(min=1), default=None, help="More tools than this is a warning [40].")
@click.option("--max-catalog-tokens", type=click.IntRange(min=1), default=None, help="A larger token estimate is a warning [10000].")
@click.option("--allowed-host", "allowed_hosts", multiple=True, metavar="HOST", help="A host descriptions may link to (repeatable).")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text", show_default=True)
def audit(**kwargs: Any) -> int:
    """Audit what TARGET advertises: schemas, names, descriptions, annotations, size, poisoned text.

    No tool is called. Exit code 0: no error found; 1: errors; 2: usage or connection error.
    """
    from dataclasses import replace

    from feeler.check.cli import audit_settings
    from feeler.check.registry import CHECKS, CheckSettings
    from feeler.check.report import report_json
    from feeler.check.runner import RunOptions, Runner
    from feeler.config import load_config
    from feeler.errors import UsageError
    from feeler.redact import redactor_for

    config = load_config()
    fmt = kwargs.pop("fmt")
    only = list(kwargs.pop("only_checks")) or None
    skip = list(kwargs.pop("skip_checks"))
    cli_thresholds = {k: kwargs.pop(k) for k in ("max_tools", "max_catalog_tokens")}
    hosts = kwargs.pop("allowed_hosts")
    opts = ConnectOptions(kwargs, config)
    catalog_checks = [name for name, c in CHECKS.items() if "catalog" in c.applies_to]
    for name in only or []:
        if name in CHECKS and name not in catalog_checks:
            raise UsageError(f"--only-check {name!r} looks at calls, not at the catalog; catalog checks: {', '.join(sorted(catalog_checks))}")
    settings = CheckSettings(**audit_settings(config))
    settings = replace(settings, **{k: v for k, v in cli_thresholds.items() if v is not None})
    if hosts:
        settings = replace(settings, allowed_hosts=tuple(hosts))
    options = RunOptions(checks=only or catalog_checks, skip_checks=skip, settings=settings, probes=False,
                         replay_dir=None, redactor=redactor_for(opts.target, config.values))
    report = Runner(opts.target, options, session_options=opts.session).audit()
    click.echo(report_json(report) if fmt == "json" else audit_text(report), nl=False)
    return report.exit_code()


@click.command("auth")
@click.argument("url")
@click.option("--bearer-env", "bearer_envs", multiple=True, required=True, metavar="[LABEL=]VAR",
              help="Environment variable holding a token: first the main (fullest) one, then LABEL=VAR for each "
                   "lower-privilege token (repeatable).")
@click.option("--only-check", "only_checks", multiple=True, metavar="NAME", help="Run only these auth checks (repeatable).")
@click.option("--timeout", type=click.FloatRange(min=0.1), default=10.0, show_default=True)
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text", show_default=True)
def auth(url: str, bearer_envs: tuple[str, ...], only_checks: tuple[str, ...], timeout: float, fmt: str) -> int:
    """Check how the loopback HTTP server at URL guards itself: 401 challenge, resource metadata, invalid
    token, foreign Origin, and which tools each token (and no token) can see.

    Exit code 0: no error found; 1: errors; 2: usage error (not loopback, a variable unset).
    """
    from feeler.check.auth import AUTH_CHECKS, run_auth
    from feeler.errors import UsageError

    variables: dict[str, str] = {}
    for i, value in enumerate(bearer_envs):
        label, sep, name = value.rpartition("=")
        label = label if sep else ("main" if i == 0 else f"token{i + 1}")
        if label in variables:
            raise UsageError(f"--bearer-env {value!r}: the label {label!r} is given twice")
        variables[label] = name
    for name in only_checks:
        if name not in AUTH_CHECKS:
            raise UsageError(f"unknown auth check {name!r}; known: {', '.join(AUTH_CHECKS)}")
    findings = run_auth(url, variables, timeout=timeout, only=list(only_checks) or None)
    if fmt == "json":
        click.echo(json.dumps({"url": url, "findings": [f.to_json() for f in findings]}, indent=2, ensure_ascii=False))
    else:
        click.echo(f"feeler auth: {url} (tokens: {', '.join(f'{k}=${v}' for k, v in variables.items())})")
        for f in findings:
            click.echo(f"  {'error' if f.severity == 'error' else 'warning'} [{f.check}] {f.message}")
        errors = len(findings.errors())
        click.echo(f"{len(findings)} findings ({errors} errors, {len(findings) - errors} warnings)")
    return 1 if findings.errors() else 0
