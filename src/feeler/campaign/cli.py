"""``feeler campaign TARGET --budget DURATION``."""

from __future__ import annotations

import os
import sys
import time
from typing import Any

import click

from feeler.cli_options import ConnectOptions, renamed_option, target_options
from feeler.report.cli import report_options, write_from_options

__all__ = ["campaign"]


class _Progress:
    """Live progress on a terminal (rich): calls/s, findings so far, round, tool, time left."""

    def __init__(self) -> None:
        from rich.console import Console
        from rich.live import Live

        self.live = Live(console=Console(stderr=True), refresh_per_second=4, transient=False)
        self._last = 0.0

    def __enter__(self) -> _Progress:
        self.live.__enter__()
        return self

    def __exit__(self, *exc: object) -> None:
        self.live.__exit__(None, None, None)

    def update(self, camp: Any) -> None:
        now = time.monotonic()
        if now - self._last < 0.25:
            return
        self._last = now
        from rich.text import Text

        report = camp.runner.report
        errors = len(report.findings.errors())
        left = camp.remaining()
        name = camp.tool_names[camp.position] if camp.tool_names else "-"
        self.live.update(
            Text.assemble(
                ("feeler campaign ", "bold"), f"round {camp.round} · {name} · ",
                (f"{camp.calls} calls", "cyan"), f" ({camp.rate():.0f}/s) · ",
                (f"{len(report.findings)} findings ({errors} errors)", "red" if errors else "green"),
                f" · {int(left // 60)}:{int(left % 60):02d} left",
            )  # fmt: skip
        )


@click.command("campaign")
@target_options
@click.option("--budget", required=True, metavar="DURATION", help="Time for the whole campaign: 90s, 15m, 2h, 1h30m.")
@click.option("--shard", default=None, metavar="i/n",
              help="Run only shard i of n (every tool in one shard; tools that depend on each other together).")
@click.option("--samples", type=click.IntRange(min=1), default=None, help="Sampled go cases per tool in the first round (doubles each round) [20].")
@renamed_option("--go-examples", "--samples", "samples", type=click.IntRange(min=1))
@click.option("--max-samples", type=click.IntRange(min=1), default=2000, show_default=True, help="Most sampled go cases per tool in one round.")
@click.option("--recursion-depth", type=click.IntRange(min=0), default=3, show_default=True,
              help="How often generation follows a recursive $ref on one path.")
@click.option("--example-db", default=None, metavar="DIR|redis://HOST:PORT/N|none",
              help="hypothesis example database: failing examples are retried first next time [.feeler/examples].")
@click.option("--folder", default=None, metavar="DIR", help="Campaign folder: state and call log [.feeler/campaigns/TARGET[-shard-i-of-n]].")
@click.option("--workers", type=click.IntRange(min=1, max=64), default=1, show_default=True,
              help="Sessions calling sampled go cases side by side: server processes for a stdio target (each "
                   "with its own state), concurrent sessions for HTTP.")
@click.option("--fresh", is_flag=True, help="Start afresh even if an interrupted campaign can be continued.")
@click.option("--sample-seed", "seed", type=int, default=None, help="Sample seed of the first round (round r uses seed + r) [0].")
@renamed_option("--seed", "--sample-seed", "seed", type=int)
@click.option("--include", multiple=True, metavar="PATTERN", help="Only tools matching this glob (repeatable).")
@click.option("--exclude", multiple=True, metavar="PATTERN", help="Skip tools matching this glob (repeatable).")
@click.option("--allow-destructive", is_flag=True, help="Also call tools annotated destructiveHint: true.")
@click.option("--replay-dir", default=".feeler/replays", show_default=True, help="Where replay files go.")
@report_options
def campaign(**kwargs: Any) -> int:
    """Test TARGET for a fixed time: rotate through its tools, drawing more cases each round.

    An interrupted campaign (Ctrl-C, SIGTERM, a kill) continues where it stopped when started again with
    the same TARGET and --shard. Exit code 0: nothing found; 1: findings; 2: usage or connection error;
    128 + the signal (130 for Ctrl-C, 143 for SIGTERM, 129 for SIGHUP): interrupted, the state is saved.
    Never point feeler at a production system.
    """
    from feeler.campaign.database import DEFAULT_EXAMPLE_DB, open_example_db
    from feeler.campaign.engine import Campaign, CampaignOptions, parse_duration, parse_shard
    from feeler.check.cli import audit_settings
    from feeler.check.registry import CheckSettings
    from feeler.check.runner import RunOptions, Runner
    from feeler.redact import redactor_for
    from feeler.report import build_report
    from feeler.report.document import now_iso

    budget = parse_duration(kwargs.pop("budget"))
    shard = parse_shard(kwargs.pop("shard"))
    report_dir, report_formats = kwargs.pop("report_dir"), kwargs.pop("report_formats")
    db_spec = kwargs.pop("example_db") or DEFAULT_EXAMPLE_DB
    opts = ConnectOptions(kwargs)
    if kwargs["samples"] is None:
        kwargs["samples"] = 20
    if kwargs["seed"] is None:
        kwargs["seed"] = 0
    slug = opts.target.slug() + (f"-shard-{shard[0]}-of-{shard[1]}" if shard else "")
    folder = kwargs["folder"] or os.path.join(".feeler", "campaigns", slug)
    config = opts.config  # secret_env/secrets and the audit thresholds hold for campaigns too
    options = RunOptions(
        sample_seed=kwargs["seed"], samples=kwargs["samples"], include=list(kwargs["include"]),
        exclude=list(kwargs["exclude"]), allow_destructive=kwargs["allow_destructive"], replay_dir=kwargs["replay_dir"],
        settings=CheckSettings(**audit_settings(config)), redactor=redactor_for(opts.target, config.values),
        workers=kwargs["workers"],
        recursion_depth=kwargs["recursion_depth"],
    )  # fmt: skip
    camp_options = CampaignOptions(
        budget=budget, folder=folder, shard=shard, samples=kwargs["samples"], max_samples=kwargs["max_samples"],
        seed=kwargs["seed"], example_db=open_example_db(db_spec), example_db_name=db_spec, fresh=kwargs["fresh"],
    )  # fmt: skip
    runner = Runner(opts.target, options, session_options=opts.session)
    started, clock = now_iso(), time.monotonic()
    progress = _Progress() if sys.stderr.isatty() else None
    camp = Campaign(runner, camp_options, on_call=progress.update if progress else None)
    if camp.resumed:
        click.echo(f"feeler: continuing the campaign in {folder} (round {camp.round}, {camp.used:.0f}s used)", err=True)
    # SIGINT, SIGTERM (a CI job cancelled) and SIGHUP unwind through feeler._signals (installed by the
    # CLI): a stop waits while a finished call is counted and logged, then the state is saved.
    interrupted: int | None = None
    try:
        if progress:
            with progress:
                report = camp.run()
        else:
            report = camp.run()
    except KeyboardInterrupt as exc:
        interrupted = getattr(exc, "exit_code", 130)
        report = runner.report
    doc = build_report(
        report, command="campaign", started_at=camp.started_at or started, duration=camp.elapsed(),
        shard=shard, campaign=camp.summary(),
    )  # fmt: skip
    del clock
    write_from_options(doc, report_dir, report_formats)
    from feeler.report import render

    click.echo(render(doc, "markdown"), nl=False)
    if interrupted is not None:
        click.echo(f"feeler: interrupted; the state is saved in {folder}: run the same command to continue", err=True)
        return interrupted
    return 1 if doc["totals"]["errors"] else 0
