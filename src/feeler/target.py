"""How a user names a server: the same four forms for every command.

* a stdio command line, given after ``--`` on the command line (``feeler catalog -- python srv.py``)
  or as one string in a config file or a ``feeler diff`` argument (``"python srv.py --flag"``);
* a Streamable HTTP URL (``http://127.0.0.1:8000/mcp``);
* a legacy HTTP+SSE URL: the same with ``--sse``, or written ``sse+http://...``;
* ``module:attribute`` naming a server object of the official SDK, served in-process.

A bearer token is never given on the command line or stored in a file: the user names the
environment variable that holds it (``--bearer-env``).
"""

from __future__ import annotations

import hashlib
import os
import re
import shlex
import urllib.parse
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from feeler.errors import UsageError
from feeler.transport.base import DEFAULT_MAX_MESSAGE_BYTES, Transport

__all__ = ["Target", "target_slug"]

_MODULE_ATTR = re.compile(r"^[A-Za-z_][\w]*(\.[A-Za-z_]\w*)*:[A-Za-z_]\w*(\.[A-Za-z_]\w*)*$")
_LOOKS_MODULE_ATTR = re.compile(r"^[^\s/\\]*:[^\s/\\]*$")


@dataclass(frozen=True)
class Target:
    """A server to test, and how to reach it.

    :param kind: ``stdio``, ``http``, ``sse`` or ``inprocess``.
    :param env: extra environment for a stdio server (added to feeler's own environment).
    :param headers: extra HTTP headers (never put a secret here: use *bearer_env*).
    :param bearer_env: name of the environment variable holding a bearer token.
    """

    kind: str
    command: tuple[str, ...] = ()
    url: str | None = None
    module: str | None = None
    env: Mapping[str, str] = field(default_factory=dict)
    cwd: str | None = None
    headers: Mapping[str, str] = field(default_factory=dict)
    bearer_env: str | None = None

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
        if bearer_env is not None and not re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", bearer_env):
            raise UsageError(f"--bearer-env={bearer_env!r} must be the NAME of an environment variable, not a token")
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
        """A short display name, used in every message about this target."""
        text = self.spec
        # keep the end (the script) visible: long interpreter paths are the boring part
        return text if len(text) <= 200 else text[:60] + "..." + text[-137:]

    def slug(self) -> str:
        """A file-system-safe name for this target, without secrets (baseline folders, replay files)."""
        return target_slug(self.spec)

    def transport(self, *, max_message_bytes: int = DEFAULT_MAX_MESSAGE_BYTES) -> Transport:
        """Build (but do not open) the transport for this target."""
        if self.kind == "stdio":
            from feeler.transport.stdio import StdioTransport

            return StdioTransport(self.name, self.command, env=self.env, cwd=self.cwd, max_message_bytes=max_message_bytes)
        if self.kind == "inprocess":
            from feeler.transport.inprocess import InProcessTransport

            return InProcessTransport(self.name, str(self.module), max_message_bytes=max_message_bytes)
        if self.kind == "http":
            from feeler.transport.http import StreamableHTTPTransport

            return StreamableHTTPTransport(
                self.name, str(self.url), headers=self.headers, bearer_env=self.bearer_env, max_message_bytes=max_message_bytes
            )
        if self.kind == "sse":
            from feeler.transport.sse import LegacySSETransport

            return LegacySSETransport(
                self.name, str(self.url), headers=self.headers, bearer_env=self.bearer_env, max_message_bytes=max_message_bytes
            )
        raise UsageError(f"unknown target kind {self.kind!r}")

    def to_json(self) -> dict[str, Any]:
        """What a replay file records about the target: never a secret (no header values, no env values)."""
        out: dict[str, Any] = {"kind": self.kind}
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
        )


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
