"""How a user names a server: the same five forms for every command.

* a ``[tool.feeler]`` target name (``feeler check harbour``): the configured target, with any
  ``--env``/``--cwd``/``--header``/``--bearer-env`` given on the command line merged into it;
* a stdio command line, given after ``--`` on the command line (``feeler catalog -- python srv.py``)
  or as one string in a config file or a ``feeler diff`` argument (``"python srv.py --flag"``);
* a Streamable HTTP URL (``http://127.0.0.1:8000/mcp``);
* a legacy HTTP+SSE URL: the same with ``--sse``, or written ``sse+http://...``;
* ``module:attribute`` naming a server object of the official SDK, served in-process.

A bearer token is never given on the command line or stored in a file: the user names the
environment variable that holds it (``--bearer-env``).

``env`` and ``cwd`` concern a server feeler starts: a stdio command gets them as its environment and
working folder; a ``module:attribute`` server runs inside feeler's own process, so its ``env`` is set in
that process while the session is open (restored when it closes) and its ``cwd`` is the folder the module
is imported from (first on ``sys.path``, and the working folder while it is imported). A URL names a
server that is already running: ``env``/``cwd`` are refused there, as ``headers``/``bearer_env`` are for
servers that are not reached over HTTP.

Folders (baselines, replays, reports, campaigns) are named after the target name; a target given on
the command line gets a secret-free slug of its spec (:func:`target_slug`).
"""

from __future__ import annotations

import hashlib
import os
import re
import shlex
import shutil
import urllib.parse
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from feeler.errors import UsageError
from feeler.transport.base import DEFAULT_MAX_MESSAGE_BYTES, Transport

__all__ = ["Target", "resolve_target", "target_slug"]

_MODULE_ATTR = re.compile(r"^[A-Za-z_][\w]*(\.[A-Za-z_]\w*)*:[A-Za-z_]\w*(\.[A-Za-z_]\w*)*$")
_LOOKS_MODULE_ATTR = re.compile(r"^[^\s/\\]*:[^\s/\\]*$")


@dataclass(frozen=True)
class Target:
    """A server to test, and how to reach it.

    :param kind: ``stdio``, ``http``, ``sse`` or ``inprocess``.
    :param env: extra environment for a stdio server (added to feeler's own environment).
    :param headers: extra HTTP headers (never put a secret here: use *bearer_env*).
    :param bearer_env: name of the environment variable holding a bearer token.
    :param label: the ``[tool.feeler]`` target name, when the target was named that way.
    """

    kind: str
    command: tuple[str, ...] = ()
    url: str | None = None
    module: str | None = None
    env: Mapping[str, str] = field(default_factory=dict)
    cwd: str | None = None
    headers: Mapping[str, str] = field(default_factory=dict)
    bearer_env: str | None = None
    label: str | None = None

    def __post_init__(self) -> None:
        where = f"target {self.label!r}" if self.label else "the target"
        if self.kind in ("http", "sse") and (self.env or self.cwd):
            given = " and ".join(x for x, v in (("--env", self.env), ("--cwd", self.cwd)) if v)
            raise UsageError(f"{given} cannot apply to {where} {self.url}: a URL names a server that is already "
                             "running; set its environment and folder where it is started")
        if self.kind in ("stdio", "inprocess") and (self.headers or self.bearer_env):
            given = " and ".join(x for x, v in (("--header", self.headers), ("--bearer-env", self.bearer_env)) if v)
            raise UsageError(f"{given} cannot apply to {where}: it is not reached over HTTP (give them with a URL)")

    @classmethod
    def parse(
        cls,
        spec: str | Sequence[str],
        *,
        sse: bool = False,
        env: Mapping[str, str] | None = None,
        cwd: str | None = None,
        headers: Mapping[str, str] | None = None,
        bearer_env: str | None = None,
    ) -> Target:
        """Read a target from a string or an argument list; raises :class:`~feeler.errors.UsageError`."""
        extra: dict[str, Any] = {"env": dict(env or {}), "cwd": cwd, "headers": dict(headers or {}), "bearer_env": bearer_env}
        if not isinstance(spec, str):
            args = tuple(spec)
            if not args:
                raise UsageError("no target: give a URL, module:attribute, or a command after `--`")
            if len(args) > 1:
                return cls(kind="stdio", command=args, **extra)
            spec = args[0]
        spec = spec.strip()
        if not spec:
            raise UsageError("the target is empty: give a URL, module:attribute, or a command after `--`")
        _check_bearer_name(bearer_env)
        lower = spec.lower()
        if lower.startswith(("sse+http://", "sse+https://")):
            return cls(kind="sse", url=spec[4:], **extra)
        if lower.startswith(("http://", "https://")):
            return cls(kind="sse" if sse else "http", url=spec, **extra)
        if "://" in spec:
            raise UsageError(f"{spec!r}: only http:// and https:// URLs are targets (sse+http:// for legacy HTTP+SSE)")
        if _LOOKS_MODULE_ATTR.match(spec) and not os.path.exists(spec):
            if not _MODULE_ATTR.match(spec):
                raise UsageError(
                    f"{spec!r} is not a valid module:attribute (for example my_package.server:app); "
                    "for a command line, put it after `--`"
                )
            return cls(kind="inprocess", module=spec, **extra)
        try:
            command = tuple(shlex.split(spec))
        except ValueError as exc:
            raise UsageError(f"cannot read the command line {spec!r}: {exc}") from exc
        return cls(kind="stdio", command=command, **extra)

    @property
    def spec(self) -> str:
        """The target written as one string, in full (what ``Target.parse`` reads back)."""
        if self.kind == "stdio":
            return shlex.join(self.command)
        if self.kind == "inprocess":
            return str(self.module)
        return f"sse+{self.url}" if self.kind == "sse" else str(self.url)

    @property
    def name(self) -> str:
        """The name reports, folders and pytest items use: the target name, or the spec shortened."""
        if self.label:
            return self.label
        text = self.spec
        # keep the end (the script) visible: long interpreter paths are the boring part
        return text if len(text) <= 200 else text[:60] + "..." + text[-137:]

    @property
    def described(self) -> str:
        """The target in messages about reaching it: ``name (spec)`` for a named target."""
        if not self.label:
            return self.name
        text = self.spec
        return f"{self.label} ({text if len(text) <= 120 else text[:40] + '...' + text[-77:]})"

    def slug(self) -> str:
        """A file-system-safe name for this target, without secrets: the folder of its baselines, replay
        files, reports and campaigns (the target name, or a slug of the spec)."""
        return target_slug(self.label or self.spec)

    def words(self, redact: Any = None) -> list[str]:
        """The command-line words that name this target again, e.g. in a hint: the target name, or the
        options and the spec (a command after ``--``). *redact* (a text function) hides secret values."""
        if self.label:
            return [self.label]
        out: list[str] = []
        for key, value in sorted(self.env.items()):
            shown = redact(value) if redact else value
            out += ["--env", f"{key}={value}" if shown == value else f"{key}=${key}"]
        if self.cwd:
            out += ["--cwd", self.cwd]
        for key, value in sorted(self.headers.items()):
            out += ["--header", f"{key}: {redact(value) if redact else value}"]
        if self.bearer_env:
            out += ["--bearer-env", self.bearer_env]
        return out + (["--", *self.command] if self.kind == "stdio" else [self.spec])

    def transport(self, *, max_message_bytes: int = DEFAULT_MAX_MESSAGE_BYTES) -> Transport:
        """Build (but do not open) the transport for this target."""
        if self.kind == "stdio":
            from feeler.transport.stdio import StdioTransport

            return StdioTransport(self.described, self.command, env=self.env, cwd=self.cwd, max_message_bytes=max_message_bytes)
        if self.kind == "inprocess":
            from feeler.transport.inprocess import InProcessTransport

            return InProcessTransport(self.described, str(self.module), env=self.env, cwd=self.cwd,
                                      max_message_bytes=max_message_bytes)
        if self.kind == "http":
            from feeler.transport.http import StreamableHTTPTransport

            return StreamableHTTPTransport(
                self.described, str(self.url), headers=self.headers, bearer_env=self.bearer_env,
                max_message_bytes=max_message_bytes,
            )
        if self.kind == "sse":
            from feeler.transport.sse import LegacySSETransport

            return LegacySSETransport(
                self.described, str(self.url), headers=self.headers, bearer_env=self.bearer_env, max_message_bytes=max_message_bytes
            )
        raise UsageError(f"unknown target kind {self.kind!r}")

    def to_json(self) -> dict[str, Any]:
        """What a replay file records about the target: never a secret (no header values, no env values)."""
        out: dict[str, Any] = {"kind": self.kind}
        if self.label:
            out["name"] = self.label
        if self.command:
            out["command"] = list(self.command)
        if self.url:
            out["url"] = self.url
        if self.module:
            out["module"] = self.module
        if self.cwd:
            out["cwd"] = self.cwd
        if self.env:
            out["envNames"] = sorted(self.env)
        if self.headers:
            out["headerNames"] = sorted(self.headers)
        if self.bearer_env:
            out["bearerEnv"] = self.bearer_env
        return out

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> Target:
        kind = data.get("kind")
        if kind not in ("stdio", "http", "sse", "inprocess"):
            raise UsageError(f"target kind {kind!r} is not one of stdio, http, sse, inprocess")
        env = {name: os.environ[name] for name in data.get("envNames", []) if name in os.environ}
        return cls(
            kind=str(kind),
            command=tuple(data.get("command", ())),
            url=data.get("url"),
            module=data.get("module"),
            cwd=data.get("cwd"),
            env=env,
            bearer_env=data.get("bearerEnv"),
            label=data.get("name"),
        )

    def merged(self, *, sse: bool = False, env: Mapping[str, str] | None = None, cwd: str | None = None,
               headers: Mapping[str, str] | None = None, bearer_env: str | None = None) -> Target:
        """This target with command-line options merged in: env and headers added (the command line wins
        for the same name), cwd and bearer_env replaced when given."""
        _check_bearer_name(bearer_env)
        return replace(
            self,
            kind="sse" if sse and self.kind == "http" else self.kind,
            env={**self.env, **(env or {})},
            cwd=cwd or self.cwd,
            headers={**self.headers, **(headers or {})},
            bearer_env=bearer_env or self.bearer_env,
        )


def resolve_target(spec: str | Sequence[str], named: Mapping[str, Target] | None = None, **options: Any) -> Target:
    """The one way every command reads a target: a name from *named* (``[tool.feeler] targets``, with the
    *options* merged in: ``sse``, ``env``, ``cwd``, ``headers``, ``bearer_env``), or any other form
    :meth:`Target.parse` reads (with the same *options*).

    A single word that is no target name, no URL, no ``module:attribute``, no existing file and no
    command on ``PATH`` is a usage error that lists the known names.
    """
    named = named or {}
    words = (spec,) if isinstance(spec, str) else tuple(spec)
    if len(words) == 1 and words[0].strip() in named:
        return named[words[0].strip()].merged(**options)
    if len(words) == 1 and _looks_like_a_name(words[0].strip(), options.get("env"), options.get("cwd")):
        known = ", ".join(sorted(named)) if named else "none: [tool.feeler] targets names no target"
        raise UsageError(f"{words[0].strip()!r} is not a target name (known: {known}), nor a URL, module:attribute, "
                         "file or command on PATH; a command line goes after `--`")
    return Target.parse(spec, **options)


def _check_bearer_name(bearer_env: str | None) -> None:
    if bearer_env is not None and not re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", bearer_env):
        raise UsageError(f"--bearer-env={bearer_env!r} must be the NAME of an environment variable, not a token")


def _looks_like_a_name(word: str, env: Mapping[str, str] | None, cwd: str | None) -> bool:
    if not word or any(c.isspace() for c in word) or "://" in word or _LOOKS_MODULE_ATTR.match(word):
        return False
    if os.path.exists(word) or (cwd and os.path.exists(os.path.join(cwd, word))):
        return False
    return shutil.which(word, path=(env or {}).get("PATH")) is None


def target_slug(target: str) -> str:
    """A folder name for *target* that carries no secret: URLs lose user info, query and fragment.

    ``http://127.0.0.1:8000/mcp?token=x`` -> ``127.0.0.1-8000-mcp``;
    ``feeler.demo.server:server`` -> ``feeler.demo.server-server``;
    ``python servers/shop.py --port 1`` -> ``python-shop.py-port-1``.
    """
    text = target.strip()
    parsed = urllib.parse.urlsplit(text)
    if parsed.scheme in ("http", "https", "sse+http", "sse+https") and parsed.hostname:
        text = f"{parsed.hostname}-{parsed.port or ''}-{parsed.path}"
    else:
        text = " ".join(Path(tok).name if "/" in tok or "\\" in tok else tok for tok in text.split())
    slug = re.sub(r"[^A-Za-z0-9._]+", "-", text).strip("-.").lower()
    slug = re.sub(r"-{2,}", "-", slug)
    if not slug:
        slug = "target"
    if len(slug) > 60:
        slug = slug[:50].rstrip("-") + "-" + hashlib.sha256(text.encode()).hexdigest()[:8]
    return slug
