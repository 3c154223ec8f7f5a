"""Click options shared by every command that talks to a server."""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any, TypeVar

import click

from feeler.errors import UsageError
from feeler.revisions import KNOWN_REVISIONS
from feeler.target import resolve_target
from feeler.transport.base import DEFAULT_MAX_MESSAGE_BYTES

__all__ = ["SECONDS", "ConnectOptions", "Seconds", "apply_renamed", "connect_options", "pairs", "renamed_option", "target_options"]

F = TypeVar("F", bound=Callable[..., Any])


#: The longest wait an option accepts: a day (past about 4.4e7 s, select(2) timeouts overflow).
MAX_SECONDS = 86_400.0


class Seconds(click.ParamType):
    """A finite number of seconds from 0.1 to a day (``nan`` and ``inf`` are refused: a wait must end)."""

    name = "seconds"

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> float:
        try:
            seconds = float(value)
        except (TypeError, ValueError):
            self.fail(f"{value!r} is not a number of seconds", param, ctx)
        if not math.isfinite(seconds) or seconds < 0.1:
            self.fail(f"{value!r} must be a finite number of seconds, at least 0.1", param, ctx)
        if seconds > MAX_SECONDS:
            self.fail(f"{value!r} is more than a day ({MAX_SECONDS:g} seconds); give at most {MAX_SECONDS:g}", param, ctx)
        return seconds


SECONDS = Seconds()


def pairs(values: tuple[str, ...], sep: str, option: str) -> dict[str, str]:
    out: dict[str, str] = {}
    for value in values:
        key, found, rest = value.partition(sep)
        if not found or not key.strip():
            raise UsageError(f"{option} {value!r}: expected NAME{sep}VALUE")
        out[key.strip()] = rest.strip() if sep == ":" else rest
    return out


def renamed_option(old: str, new: str, dest: str, **attrs: Any) -> Callable[[F], F]:
    """A hidden option under its *old* name that feeds *dest* (the new option's value) with a notice.

    The command calls :func:`apply_renamed` on its keyword arguments; the new option wins when both
    are given.
    """

    def store(ctx: click.Context, _param: click.Parameter, value: Any) -> None:
        if value in (None, (), False):
            return
        from feeler._deprecated import notice

        notice(old, new)
        ctx.meta.setdefault("feeler.renamed", {})[dest] = value

    return click.option(old, f"_renamed_{dest}", hidden=True, expose_value=False, callback=store, **attrs)


def apply_renamed(kwargs: dict[str, Any]) -> dict[str, Any]:
    """Fill *kwargs* from options given under an old name (see :func:`renamed_option`)."""
    ctx = click.get_current_context(silent=True)
    for dest, value in ((ctx.meta.get("feeler.renamed") or {}) if ctx else {}).items():
        if kwargs.get(dest) in (None, (), False):
            kwargs[dest] = value
    return kwargs


class ConnectOptions:
    """The target and session options a command was given, read the one way every command reads them:
    a ``[tool.feeler]`` target name (the options merged into it), a URL, ``module:attribute``, or a
    command after ``--``; the protocol version and timeout fall back to ``[tool.feeler]``.

    :param config: the ``[tool.feeler]`` table (read from the nearest pyproject.toml when not given).
    """

    def __init__(self, kwargs: dict[str, Any], config: Any = None) -> None:
        from feeler.config import load_config

        self.config = config if config is not None else load_config()
        self.target = resolve_target(
            kwargs.pop("target"),
            self.config.targets(),
            sse=kwargs.pop("sse"),
            env=pairs(kwargs.pop("env"), "=", "--env"),
            cwd=kwargs.pop("cwd"),
            headers=pairs(kwargs.pop("header"), ":", "--header"),
            bearer_env=kwargs.pop("bearer_env"),
        )
        apply_renamed(kwargs)
        timeout = kwargs.pop("timeout")
        self.session = {
            "revision": kwargs.pop("protocol_version") or self.config.get("protocol_version"),
            "timeout": timeout if timeout is not None else float(self.config.get("timeout", 30.0)),
            "max_message_bytes": kwargs.pop("max_message_bytes"),
        }


def target_options(func: F | None = None, *, old_revision: bool = True) -> Any:
    """``TARGET...`` plus the options that say how to reach it (``@target_options``, or
    ``@target_options(old_revision=False)`` for a command whose former ``--revision`` meant another thing)."""
    if func is None:
        return lambda f: target_options(f, old_revision=old_revision)
    decorators = [
        click.argument("target", nargs=-1, required=True, metavar="TARGET"),
        click.option("--sse", is_flag=True, help="The URL is a legacy HTTP+SSE server (2024-11-05 transport)."),
        click.option("--env", multiple=True, metavar="NAME=VALUE",
                     help="Environment for a server feeler starts: a command, module:attribute or a target name "
                          "(repeatable; added to the configured env)."),
        click.option("--cwd", type=click.Path(file_okay=False),
                     help="Working folder of a command (for module:attribute: the folder it is imported from)."),
        click.option("--header", multiple=True, metavar="'NAME: VALUE'", help="Extra HTTP header (repeatable; no secrets)."),
        click.option(
            "--bearer-env", metavar="VAR", help="Name of the environment variable holding a bearer token for HTTP targets."
        ),
    ]
    for decorator in reversed(decorators):
        func = decorator(func)
    return connect_options(func, old_revision=old_revision)


def connect_options(func: F, *, old_revision: bool = True) -> F:
    """Session options: protocol version pin, timeout, answer size cap."""
    decorators = [
        click.option(
            "--protocol-version",
            type=click.Choice(KNOWN_REVISIONS),
            help="Pin one protocol version instead of detecting the era and negotiating.",
        ),
        *([renamed_option("--revision", "--protocol-version", "protocol_version", type=click.Choice(KNOWN_REVISIONS))]
          if old_revision else []),
        click.option("--timeout", type=SECONDS, default=None, help="Seconds to wait for each answer [30, or timeout in [tool.feeler]]."),
        click.option(
            "--max-message-bytes",
            type=click.IntRange(min=1024),
            default=DEFAULT_MAX_MESSAGE_BYTES,
            show_default=True,
            help="Answers larger than this end the call with an error.",
        ),
    ]
    for decorator in reversed(decorators):
        func = decorator(func)
    return func
