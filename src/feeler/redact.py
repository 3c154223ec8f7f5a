"""Secret hygiene: one place that knows what must never reach a file or a terminal.

A :class:`Redactor` replaces every secret value with ``[secret:NAME]`` (NAME is the environment
variable it came from, or ``listed`` for a value listed in the configuration) and, where asked, writes
absolute paths under known folders relatively (``<project>/...``, ``<home>/...``, ``<server-cwd>/...``).

What counts as a secret (README "Secrets"):

- the value of every environment variable (feeler's own and the target's ``--env``) whose NAME matches
  :data:`SECRET_NAME` (KEY, TOKEN, SECRET, PASSWORD, PASSWD, CREDENTIAL, PRIVATE, AUTH, ...), at least
  :data:`MIN_SECRET_LENGTH` characters long (shorter values would match by chance);
- the value of the variable named by ``--bearer-env`` (the bearer token), whatever its name;
- the values of the variables listed in ``secret_env = ["DB_URL"]`` (``[tool.feeler]``), whatever their
  names, and the literal strings in ``secrets = [...]`` (prefer ``secret_env``: a literal in a committed
  file is no longer a secret).

Other layers call :meth:`Redactor.text` on any text and :meth:`Redactor.json` on any JSON value before
writing it (reports, replay files, recorded outputs, what ``feeler replay`` prints). A redactor is cheap;
build one per run with :func:`redactor_for`.
"""

from __future__ import annotations

import json
import os
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

__all__ = ["MIN_SECRET_LENGTH", "SECRET_NAME", "Redactor", "redactor_for", "secret_values", "secret_pairs"]

#: Environment variable names whose values are treated as secrets (common practice).
SECRET_NAME = re.compile(r"KEY|TOKEN|SECRET|PASSWORD|PASSWD|PWD_|CREDENTIAL|PRIVATE|AUTH|COOKIE|SESSION", re.IGNORECASE)
#: Shorter values are not redacted by name alone: "1" or "true" would match everywhere.
MIN_SECRET_LENGTH = 8
#: Names of the environment that are never secrets although they match (common practice).
_NOT_SECRET = frozenset({"PWD", "OLDPWD", "SSH_AUTH_SOCK", "XDG_SESSION_ID", "XDG_SESSION_TYPE", "XDG_SESSION_CLASS",
                         "XDG_SESSION_DESKTOP", "DESKTOP_SESSION", "GPG_AGENT_INFO", "KEYTIMEOUT"})


def secret_pairs(
    env: Mapping[str, str] | None = None,
    *,
    names: Iterable[str] = (),
    literals: Iterable[str] = (),
) -> dict[str, str]:
    """``{value: label}`` of every secret: secret-looking variables of *env* (default: os.environ),
    the variables in *names* (any length, any name), and *literals* (label ``listed``)."""
    env = os.environ if env is None else env
    out: dict[str, str] = {}
    for name, value in env.items():
        if name not in _NOT_SECRET and SECRET_NAME.search(name) and len(value) >= MIN_SECRET_LENGTH:
            out.setdefault(value, name)
    for name in names:
        value = env.get(name) or os.environ.get(name)
        if value and len(value) >= 4:
            out[value] = name
    for value in literals:
        if isinstance(value, str) and len(value) >= 4:
            out.setdefault(value, "listed")
    return out


def secret_values(extra_env: Mapping[str, str] | None = None) -> tuple[str, ...]:
    """Values of secret-looking environment variables (os.environ plus *extra_env*), sorted."""
    return tuple(sorted(secret_pairs({**os.environ, **(extra_env or {})})))


def _forms(value: str) -> list[str]:
    """A value as it may appear in text: raw, JSON-escaped, and URL-escaped."""
    from urllib.parse import quote

    forms = [value, json.dumps(value, ensure_ascii=False)[1:-1], json.dumps(value)[1:-1], quote(value, safe="")]
    return sorted({f for f in forms if f}, key=len, reverse=True)


@dataclass
class Redactor:
    """Replaces secret values (and, in :meth:`paths`, known folders) in text and JSON.

    :param secrets: ``{value: label}``; the label (a variable name) is what the mask shows.
    :param roots: ``{label: absolute folder}`` for :meth:`paths`, e.g. ``{"<home>": "/home/ada"}``.
    """

    secrets: Mapping[str, str] = field(default_factory=dict)
    roots: Mapping[str, str] = field(default_factory=dict)

    def __post_init__(self) -> None:
        pairs = [(form, label) for value, label in self.secrets.items() for form in _forms(value)]
        pairs.sort(key=lambda p: len(p[0]), reverse=True)
        self._pairs = pairs
        self._pattern = re.compile("|".join(re.escape(f) for f, _ in pairs)) if pairs else None
        self._labels = dict(pairs)
        roots = [(os.path.normpath(path), label) for label, path in self.roots.items() if path and len(os.path.normpath(path)) > 1]
        roots.sort(key=lambda p: len(p[0]), reverse=True)
        self._roots = roots
        self._root_pattern = (
            re.compile("|".join(rf"{re.escape(path)}(?![\w.-])" for path, _ in roots)) if roots else None
        )
        self._root_labels = dict(roots)

    @property
    def values(self) -> tuple[str, ...]:
        """The secret values themselves (for the checks that look for them in answers)."""
        return tuple(sorted(self.secrets))

    def text(self, text: str) -> str:
        """*text* with every secret value replaced by ``[secret:NAME]``."""
        if self._pattern is None or not text:
            return text
        return self._pattern.sub(lambda m: f"[secret:{self._labels[m.group(0)]}]", text)

    def json(self, value: Any) -> Any:
        """A copy of the JSON *value* with every string (keys too) passed through :meth:`text`."""
        return _walk(value, self.text)

    def paths(self, value: Any) -> Any:
        """A copy of the JSON (or text) *value* with secrets redacted and known folders written relatively."""

        def both(text: str) -> str:
            text = self.text(text)
            if self._root_pattern is None:
                return text
            return self._root_pattern.sub(lambda m: self._root_labels[m.group(0)], text)

        return _walk(value, both)


def _walk(value: Any, fix: Any) -> Any:
    if isinstance(value, str):
        return fix(value)
    if isinstance(value, dict):
        return {fix(k) if isinstance(k, str) else k: _walk(v, fix) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_walk(v, fix) for v in value]
    return value


def redactor_for(target: Any = None, config: Mapping[str, Any] | None = None, *, project: str | None = None) -> Redactor:
    """The redactor of one run: secrets of os.environ, the target's ``env`` and bearer variable, and the
    configuration's ``secret_env``/``secrets``; roots: the project folder (*project*, default the current
    folder), the home folder and the target's working folder."""
    cfg = config or {}
    env = {**os.environ, **dict(getattr(target, "env", None) or {})}
    names = [str(n) for n in cfg.get("secret_env", []) or []]
    bearer = getattr(target, "bearer_env", None)
    if bearer:
        names.append(bearer)
    secrets = secret_pairs(env, names=names, literals=[str(s) for s in cfg.get("secrets", []) or []])
    roots = {"<project>": os.path.abspath(project or os.getcwd()), "<home>": os.path.expanduser("~")}
    cwd = getattr(target, "cwd", None)
    if cwd:
        roots["<server-cwd>"] = os.path.abspath(cwd)
    return Redactor(secrets, roots)
