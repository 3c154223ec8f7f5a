"""The ``feeler`` command line.

Commands live in the modules named in :data:`COMMANDS` and are imported only when used, so
``feeler --help`` stays fast. Every command follows the same exit codes:

====  =======================================================================
0     done, nothing found
1     findings (``check``) or breaking changes (``diff``)
2     usage error, bad input file, or the target could not be reached / negotiated
3     an internal error in feeler (a bug: please report it with the traceback)
====  =======================================================================
"""

from __future__ import annotations

import importlib
import sys
import traceback
import warnings
from collections.abc import Sequence

import click

from feeler import __version__
from feeler.errors import FeelerError

__all__ = ["COMMANDS", "main", "run"]

EXIT_OK, EXIT_FINDINGS, EXIT_USAGE, EXIT_INTERNAL = 0, 1, 2, 3

#: command name -> "module:attribute" of its click command
COMMANDS: dict[str, str] = {
    "catalog": "feeler.commands:catalog",
    "demo": "feeler.commands:demo",
    "cases": "feeler.generate.cli:cases",
    "check": "feeler.check.cli:check",
    "audit": "feeler.check.audit_cli:audit",
    "auth": "feeler.check.audit_cli:auth",
    "replay": "feeler.check.cli:replay",
    "diff": "feeler.diff.cli:diff",
    "approve": "feeler.baseline.cli:approve",
    "report": "feeler.report.cli:report",
    "campaign": "feeler.campaign.cli:campaign",
}


#: command name -> its line in ``feeler --help``, so that the help imports no command module
SUMMARIES: dict[str, str] = {
    "catalog": "Capture the catalog (tools, prompts, resources...) as canonical JSON.",
    "demo": "Check the bundled demo server and show what feeler finds.",
    "cases": "Print the go and no-go cases of one schema as JSON Lines.",
    "check": "Call every tool with go and no-go cases and check every answer.",
    "replay": "Send a finding's recorded request again.",
    "diff": "Compare two catalogs: breaking or not, with witnesses.",
    "approve": "Show the differences from the baseline, then write the new one.",
    "report": "Join and render report documents (feeler-report.json).",
    "campaign": "Test a server for a fixed time budget (nightly runs, shards, resume).",
    "audit": "Audit what a server advertises: schemas, names, descriptions, size, poisoned text.",
    "auth": "Check an HTTP server's authorization from outside (loopback only).",
}


class _LazyGroup(click.Group):
    def list_commands(self, ctx: click.Context) -> list[str]:
        return sorted(COMMANDS)

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        rows = [(name, SUMMARIES.get(name, "")) for name in self.list_commands(ctx)]
        with formatter.section("Commands"):
            formatter.write_dl(rows)

    def get_command(self, ctx: click.Context, cmd_name: str) -> click.Command | None:
        return self._load(cmd_name)

    @staticmethod
    def _load(name: str) -> click.Command | None:
        spec = COMMANDS.get(name)
        if spec is None:
            return None
        module_name, _, attr = spec.partition(":")
        try:
            module = importlib.import_module(module_name)
        except ModuleNotFoundError as exc:
            if exc.name and module_name.startswith(exc.name):
                return None  # that part of feeler is not built yet
            raise
        return getattr(module, attr, None)


@click.group(cls=_LazyGroup, context_settings={"help_option_names": ["-h", "--help"], "max_content_width": 100})
@click.version_option(__version__, prog_name="feeler")
def cli() -> None:
    """feeler tests MCP servers: go and no-go arguments from every tool's schema, checks on every
    answer, and breaking-change verdicts against an approved baseline.

    Never point feeler at production systems: it calls tools for real.
    """


def run(argv: Sequence[str] | None = None) -> int:
    """Run the command line with *argv*; return the exit code (used by tests and :func:`main`)."""
    from feeler import _signals

    _signals.install()  # SIGTERM/SIGHUP unwind like Ctrl-C, so every server started is ended
    warnings.showwarning = _show_warning
    try:
        result = cli.main(args=list(argv) if argv is not None else None, prog_name="feeler", standalone_mode=False)
    except click.exceptions.Abort as exc:
        if isinstance(exc.__context__, _signals.Stopped):  # click turns KeyboardInterrupt into Abort
            click.echo(f"feeler: {exc.__context__.said}; the servers it started were ended", err=True)
            return exc.__context__.exit_code
        if isinstance(exc.__context__, KeyboardInterrupt):
            click.echo("feeler: interrupted", err=True)
            return 130
        click.echo("feeler: aborted", err=True)
        return EXIT_USAGE
    except click.ClickException as exc:
        exc.show()
        return EXIT_USAGE
    except SystemExit as exc:  # a command that ends with its exit code (diff, approve)
        return exc.code if isinstance(exc.code, int) else (EXIT_OK if exc.code is None else EXIT_USAGE)
    except FeelerError as exc:
        click.echo(f"feeler: {exc}", err=True)
        return EXIT_USAGE
    except _signals.Stopped as exc:
        click.echo(f"feeler: {exc.said}; the servers it started were ended", err=True)
        return exc.exit_code
    except KeyboardInterrupt:
        click.echo("feeler: interrupted", err=True)
        return 130
    except Exception:  # a bug in feeler
        traceback.print_exc()
        click.echo("feeler: internal error (a bug in feeler; please report it with the traceback above)", err=True)
        return EXIT_INTERNAL
    return int(result) if isinstance(result, int) else EXIT_OK


_python_showwarning = warnings.showwarning


def _show_warning(message: Warning | str, category: type[Warning], filename: str, lineno: int,
                  file: object = None, line: str | None = None) -> None:
    """feeler's own warnings as one ``feeler: warning: ...`` line; others as Python shows them."""
    if category.__module__.startswith("feeler"):
        click.echo(f"feeler: warning: {message}", err=True)
    else:
        _python_showwarning(message, category, filename, lineno, file, line)  # type: ignore[arg-type]


def main() -> None:
    sys.exit(run())


if __name__ == "__main__":  # pragma: no cover - python -m feeler.cli
    main()
