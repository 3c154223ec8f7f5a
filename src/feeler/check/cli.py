"""``feeler check TARGET`` and ``feeler replay FILE``."""

from __future__ import annotations

import math
import sys
import time
from typing import Any

import click

from feeler.cli_options import SECONDS, ConnectOptions, apply_renamed, renamed_option, target_options
from feeler.errors import UsageError
from feeler.report.cli import report_options, write_from_options

__all__ = ["check", "replay_command"]


def _budgets(values: tuple[str, ...], config: dict[str, Any]) -> dict[str, float]:
    out = {str(k): float(v) for k, v in (config or {}).items()}
    for value in values:
        name, sep, seconds = value.rpartition("=")
        try:
            out[name if sep else "*"] = float(seconds)
        except ValueError:
            raise UsageError(f"--budget {value!r}: expected SECONDS or TOOL=SECONDS") from None
        if not (math.isfinite(out[name if sep else "*"]) and out[name if sep else "*"] > 0):
            raise UsageError(f"--budget {value!r}: the seconds must be a finite number above 0")
    return out


def audit_settings(config: Any) -> dict[str, Any]:
    """The audit thresholds of ``[tool.feeler]`` (``max_tools``, ``max_catalog_tokens``, ``allowed_hosts``)."""
    out: dict[str, Any] = {}
    for key in ("max_tools", "max_catalog_tokens"):
        if config.get(key) is not None:
            out[key] = int(config.get(key))
    if config.get("allowed_hosts"):
        out["allowed_hosts"] = tuple(str(h) for h in config.get("allowed_hosts"))
    return out


def _list_checks(ctx: click.Context, _param: click.Parameter, value: bool) -> None:
    if not value or ctx.resilient_parsing:
        return
    import shutil
    import textwrap

    from feeler.check.registry import CHECKS

    checks = sorted(CHECKS.values(), key=lambda c: c.name)
    name_w = max(len(c.name) for c in checks)
    kinds_w = max(len(", ".join(c.applies_to)) for c in checks)
    indent = " " * (name_w + 1 + 8 + 1 + kinds_w + 1)
    width = max(shutil.get_terminal_size((120, 24)).columns, len(indent) + 40)
    for check in checks:
        head = f"{check.name:<{name_w}} {check.severity:<8} {', '.join(check.applies_to):<{kinds_w}} "
        click.echo(textwrap.fill(check.doc, width=width, initial_indent=head, subsequent_indent=indent))
        if check.reference:  # on a line of its own, whole, so that it can be searched for
            click.echo(f"{indent}({check.reference})")
    ctx.exit(0)


@click.command("check")
@click.option("--list-checks", is_flag=True, expose_value=False, is_eager=True, callback=_list_checks,
              help="List the checks (name, severity, what they look at, reference) and exit.")
@target_options
@click.option("--depth", type=click.Choice(["quick", "standard", "deep"]), default=None,
              help="How many cases: quick, standard (the default, locally and in CI) or deep.")
@click.option("--samples", type=click.IntRange(min=0), default=None,
              help="Sampled go cases per tool, besides the boundary cases (overrides --depth; standard: 20).")
@click.option("--sample-seed", type=int, default=None, help="Seed of the sampled go cases (default 0: the same cases every run).")
@renamed_option("--go-examples", "--samples", "samples", type=click.IntRange(min=0))
@renamed_option("--seed", "--sample-seed", "sample_seed", type=int)
@click.option("--value", "values", multiple=True, metavar="[TOOL:]PROPERTY=JSON",
              help="A value from the server's world for a property or $.path (repeatable; a JSON list: one of these).")
@click.option("--no-learn", is_flag=True, help="Do not learn values from answers (and skip the discovery pass).")
@click.option("--chain-runs", type=click.IntRange(min=0), default=None, help="Call chains to run (0: none) [20].")
@click.option("--chain-steps", type=click.IntRange(min=1), default=None, help="The most calls in one chain [8].")
@click.option("--recursion-depth", type=click.IntRange(min=0), default=None,
              help="How often generation follows a recursive $ref on one path [3].")
@click.option("--include", multiple=True, metavar="PATTERN", help="Only tools matching this glob (repeatable).")
@click.option("--exclude", multiple=True, metavar="PATTERN", help="Skip tools matching this glob (repeatable).")
@click.option("--allow-destructive", is_flag=True, help="Also call tools annotated destructiveHint: true.")
@click.option("--strict-go", is_flag=True, help="isError on a go case is a finding, not just counted.")
@renamed_option("--strict", "--strict-go", "strict_go", is_flag=True)
@click.option("--budget", multiple=True, metavar="[TOOL=]SECONDS", help="Latency budget per call (repeatable).")
@click.option("--only-check", "only_checks", multiple=True, metavar="NAME", help="Run only these checks (repeatable).")
@renamed_option("--check", "--only-check", "only_checks", multiple=True)
@click.option("--skip-check", "skip_checks", multiple=True, metavar="NAME", help="Do not run this check (repeatable).")
@click.option("--no-probes", is_flag=True, help="Do not send protocol-level no-go requests.")
@click.option("--workers", type=click.IntRange(min=1, max=64), default=1, show_default=True,
              help="Sessions calling sampled go cases side by side (server processes for stdio, sessions for HTTP).")
@click.option("--dry-run", is_flag=True,
              help="Print the calls the run would make as JSON Lines (those that depend on answers say so); call no tool.")
@click.option("--every-protocol-version", "every_revision", is_flag=True,
              help="Check under each protocol version the server supports, with a table.")
@renamed_option("--every-revision", "--every-protocol-version", "every_revision", is_flag=True)
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text", show_default=True)
@click.option("--replay-dir", default=None, help="Where replay files go [.feeler/replays].")
@report_options
@click.option("--call-log", default=None, metavar="FILE", help="Append one JSON line per tool call to FILE (see README, Call log).")
@click.option("-v", "--verbose", is_flag=True, help="Show full arguments in findings.")
def check(**kwargs: Any) -> int:
    """Call every tool of TARGET with go and no-go cases and check every answer.

    Exit code 0: nothing found; 1: findings; 2: usage or connection error.
    Never point feeler at a production system: it calls tools for real.
    """
    from feeler.check.registry import CheckSettings
    from feeler.check.report import report_json, report_text
    from feeler.check.runner import RunOptions, Runner
    from feeler.depth import samples_for
    from feeler.generate import DEFAULT_RECURSION_DEPTH
    from feeler.redact import redactor_for

    apply_renamed(kwargs)
    fmt = kwargs.pop("fmt")
    verbose = kwargs.pop("verbose")
    every = kwargs.pop("every_revision")
    report_dir, report_formats = kwargs.pop("report_dir"), kwargs.pop("report_formats")
    call_log = kwargs.pop("call_log")
    opts = ConnectOptions(kwargs)
    config = opts.config
    from feeler.world.known import known_pool

    samples = kwargs["samples"] if kwargs["samples"] is not None else config.get("samples")
    if samples is None:
        samples = samples_for(kwargs["depth"] or config.get("depth"))
    seed = kwargs["sample_seed"] if kwargs["sample_seed"] is not None else config.get("sample_seed", 0)
    pool = known_pool(kwargs["values"], config.get("values"), config.get("values_hook"), seed=seed)
    options = RunOptions(
        values=pool,
        sample_seed=seed,
        samples=samples,
        include=list(kwargs["include"]) or list(config.get("include", [])),
        exclude=list(kwargs["exclude"]) or list(config.get("exclude", [])),
        allow_destructive=kwargs["allow_destructive"] or bool(config.get("allow_destructive", False)),
        checks=list(kwargs["only_checks"]) or config.get("only_checks"),
        skip_checks=list(kwargs["skip_checks"]) or list(config.get("skip_checks", [])),
        settings=CheckSettings(
            strict_go=kwargs["strict_go"] or bool(config.get("strict_go", False)),
            latency_budget=_budgets(kwargs["budget"], config.get("budgets", {})),
            **audit_settings(config),
        ),
        probes=not kwargs["no_probes"],
        dry_run=kwargs["dry_run"],
        replay_dir=kwargs["replay_dir"] or config.get("replay_dir", ".feeler/replays"),
        redactor=redactor_for(opts.target, config.values),
        learn=not kwargs["no_learn"] and bool(config.get("learn", True)),
        chain_runs=kwargs["chain_runs"] if kwargs["chain_runs"] is not None else config.get("chain_runs", 20),
        chain_steps=kwargs["chain_steps"] if kwargs["chain_steps"] is not None else config.get("chain_steps", 8),
        workers=kwargs["workers"],
        recursion_depth=kwargs["recursion_depth"] if kwargs["recursion_depth"] is not None else config.get(
            "recursion_depth", DEFAULT_RECURSION_DEPTH),
    )
    progress = (lambda line: click.echo(line, err=True)) if sys.stderr.isatty() or fmt == "text" else None
    if every:
        from feeler.check.revisions import check_every_revision

        return check_every_revision(opts, options, fmt=fmt, progress=progress)
    from feeler.report.document import now_iso

    started, clock = now_iso(), time.monotonic()
    runner = Runner(opts.target, options, session_options=opts.session, progress=progress)
    if call_log:
        from feeler.campaign.calllog import CallLog

        with CallLog(call_log) as log:
            runner.on_call = log.hook
            report = runner.run()
    else:
        report = runner.run()
    if options.dry_run:
        import json

        for call in report.planned:
            click.echo(json.dumps(call.to_json(), ensure_ascii=False, sort_keys=True))
        depends = sum(1 for call in report.planned if call.depends)
        click.echo(f"feeler: {len(report.planned)} calls would be made (dry run); {depends} of them may differ in the "
                   "real run, as their dependsOnAnswers says; not listed, as they depend on answers: the call one step "
                   "inside a bound the tool refused, and the call chains (--chain-runs)", err=True)
        return 0
    click.echo(report_json(report) if fmt == "json" else report_text(report, verbose=verbose), nl=False)
    if report_dir:
        from feeler.report import build_report

        write_from_options(build_report(report, started_at=started, duration=time.monotonic() - clock), report_dir, report_formats)
    return report.exit_code()


@click.command("replay")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--env", multiple=True, metavar="NAME=VALUE",
              help="Environment for the server (repeatable): the replay file keeps only the names, never values.")
@click.option("--timeout", type=SECONDS, default=30.0, show_default=True)
def replay_command(file: str, env: tuple[str, ...], timeout: float) -> int:
    """Send the request recorded in a replay FILE again and show the answer.

    The target is the [tool.feeler] target the file names (its configured env included), or the one
    recorded in the file. Exit code 1 when the finding shows again, 0 when it does not, 2 on errors and
    when the replay cannot judge (the server's world differs from the recorded run: a chain's linked
    value, or the base a no-go or bound case was built on, is gone).
    """
    from feeler.check.replay import load_replay, replay, replay_target
    from feeler.cli_options import pairs
    from feeler.config import load_config
    from feeler.redact import redactor_for

    data = load_replay(file)
    config = load_config()
    target, notes = replay_target(data, config, pairs(env, "=", "--env"))
    outcome = replay(data, timeout=timeout, target=target)
    red = redactor_for(target, config.values).text  # the new answer may leak too
    for line in notes + outcome.notes:
        click.echo(red(f"note:     {line}"), err=True)
    if outcome.base_request is not None:
        click.echo(f"base:     {red(outcome.base_request)}")
    click.echo(f"sent:     {red(outcome.request)}")
    click.echo(f"answer:   {red(str(outcome.answer))}")
    finding = data["finding"]
    check = outcome.check
    click.echo(red(f"finding:  [{check}] {finding.get('message')}"))
    if outcome.inconclusive is not None:
        click.echo(red(f"cannot tell: [{check}] {outcome.inconclusive}"), err=True)
        return 2
    if outcome.reproduced:
        click.echo(red(f"reproduced: [{check}] {outcome.messages[0]}"))
        return 1
    click.echo(red(f"not reproduced: [{check}] the answer no longer shows this problem"))
    return 0


replay = replay_command
