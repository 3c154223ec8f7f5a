"""``[tool.feeler]`` in pyproject.toml: the settings every entry point (CLI, pytest plugin) shares.

Example::

    [tool.feeler]
    targets = { demo = "python -m feeler.demo", staging = { url = "http://127.0.0.1:8000/mcp", bearer_env = "MCP_TOKEN" } }
    exclude = ["purge_*"]
    budgets = { "*" = 2.0, slow_report = 10.0 }
    strict_go = false
    depth = "standard"
    output_masks = ["$.structuredContent.issuedAt"]

    [tool.feeler.values]            # values from the server's world (feeler.world.known)
    root = "/srv/data"
    "read_file:limit" = [1, 10]

Unknown keys and wrong types are errors that name the key, the value and what is expected.
"""

from __future__ import annotations

import difflib
import math
import os
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import Any

from feeler._read import read_toml
from feeler.errors import UsageError
from feeler.target import Target

__all__ = ["Config", "load_config"]

#: key -> (expected Python types, description)
_KEYS: dict[str, tuple[tuple[type, ...], str]] = {
    "targets": ((dict,), "a table of name = target"),
    "include": ((list,), "a list of tool name patterns"),
    "exclude": ((list,), "a list of tool name patterns"),
    "allow_destructive": ((bool,), "true or false"),
    "strict_go": ((bool,), "true or false"),
    "budgets": ((dict,), "a table of tool name (or \"*\") = seconds"),
    "samples": ((int,), "a whole number of sampled go cases per tool"),
    "sample_seed": ((int,), "a whole number"),
    "depth": ((str,), "quick, standard or deep"),
    "protocol_version": ((str,), "a protocol version such as 2025-11-25"),
    "timeout": ((int, float), "seconds"),
    "only_checks": ((list,), "a list of check names"),
    "skip_checks": ((list,), "a list of check names"),
    "baselines": ((str,), "a folder"),
    "output_masks": ((list,), "a list of JSON paths ($.structuredContent.issuedAt, * for any key)"),
    "output_mask_patterns": ((list,), "a list of regular expressions over string values"),
    "record_tools": ((list,), "a list of tool name patterns whose outputs are recorded (read-only tools always are)"),
    "record_per_tool": ((int,), "a whole number of pinned go cases recorded per tool"),
    "replay_dir": ((str,), "a folder"),
    "secret_env": ((list,), "a list of environment variable names whose values are secrets"),
    "secrets": ((list,), "a list of literal secret strings (prefer secret_env)"),
    "max_tools": ((int,), "a whole number: more tools than this is a catalog_size warning"),
    "max_catalog_tokens": ((int,), "a whole number: a larger token estimate is a catalog_size warning"),
    "allowed_hosts": ((list,), "a list of host names descriptions may link to"),
    "values": ((dict,), "a table of [TOOL:]PROPERTY (or $.path) = value (a list: one of these)"),
    "values_hook": ((str,), "\"package.module:function\" returning hypothesis strategies per property"),
    "learn": ((bool,), "true or false (learn values from answers; a discovery pass first)"),
    "chain_runs": ((int,), "a whole number of chain runs (0: no chains)"),
    "chain_steps": ((int,), "a whole number: the most calls in one chain"),
    "recursion_depth": ((int,), "a whole number: how often generation follows a recursive $ref on one path"),
}

#: Old key -> its new name; read for one release with a notice (``profile`` values are mapped too).
RENAMED_KEYS: dict[str, str] = {
    "go_examples": "samples",
    "seed": "sample_seed",
    "revision": "protocol_version",
    "checks": "only_checks",
    "profile": "depth",
}


@dataclass
class Config:
    """The validated ``[tool.feeler]`` table (empty when there is none)."""

    source: str | None = None
    values: dict[str, Any] = field(default_factory=dict)

    def get(self, key: str, default: Any = None) -> Any:
        return self.values.get(key, default)

    def targets(self) -> dict[str, Target]:
        out = {}
        for name, spec in (self.values.get("targets") or {}).items():
            out[name] = _target(name, spec, self.source or "pyproject.toml")
        return out


def _target(name: str, spec: Any, source: str) -> Target:
    where = f"{source}: [tool.feeler.targets] {name}"
    try:
        return replace(_target_of(where, spec), label=name)
    except UsageError as exc:
        if str(exc).startswith(where):
            raise
        raise UsageError(f"{where}: {exc}") from None


def _target_of(where: str, spec: Any) -> Target:
    if isinstance(spec, str):
        return Target.parse(spec)
    if not isinstance(spec, Mapping):
        raise UsageError(f"{where} must be a string or a table, got {type(spec).__name__}")
    forms = [k for k in ("command", "url", "module") if k in spec]
    if len(forms) != 1:
        raise UsageError(f"{where} needs exactly one of command, url, module")
    allowed = {"command", "url", "module", "env", "cwd", "headers", "bearer_env", "sse"}
    unknown = set(spec) - allowed
    if unknown:
        raise UsageError(f"{where}: unknown keys {sorted(unknown)}; known: {sorted(allowed)}")
    _check_target_types(where, spec)
    first = spec[forms[0]]
    value: Any = first if not (forms[0] == "command" and isinstance(first, list)) else [str(x) for x in first]
    if forms[0] == "command" and isinstance(value, str):
        import shlex

        value = shlex.split(value)
    if forms[0] == "command" and not value:
        raise UsageError(f"{where}: the command is empty")
    options = {"env": dict(spec.get("env", {})), "cwd": spec.get("cwd"), "headers": dict(spec.get("headers", {})),
               "bearer_env": spec.get("bearer_env")}  # fmt: skip
    if forms[0] == "command":
        return Target(kind="stdio", command=tuple(value), **options)
    target = Target.parse(str(first), sse=bool(spec.get("sse", False)), **options)
    if target.kind != ("inprocess" if forms[0] == "module" else target.kind) or (forms[0] == "url" and not target.url):
        raise UsageError(f"{where}: {forms[0]}={first!r} is not a {'module:attribute' if forms[0] == 'module' else 'URL'}")
    return target


def _check_target_types(where: str, spec: Mapping[str, Any]) -> None:
    expected = {"url": str, "module": str, "cwd": str, "bearer_env": str, "sse": bool}
    for key, kind in expected.items():
        if key in spec and not isinstance(spec[key], kind):
            raise UsageError(f"{where}: {key}={spec[key]!r} must be {'true or false' if kind is bool else 'a string'}"[:400])
    command = spec.get("command")
    if command is not None and not (isinstance(command, str) or (
        isinstance(command, list) and all(isinstance(x, str) for x in command)
    )):
        raise UsageError(f"{where}: command={command!r} must be a string or a list of strings"[:400])
    for key in ("env", "headers"):
        table = spec.get(key, {})
        if not isinstance(table, Mapping) or not all(isinstance(v, str) for v in table.values()):
            raise UsageError(f"{where}: {key}={table!r} must be a table of name = \"string\""[:400])


def load_config(path: str | None = None, *, start: str | None = None) -> Config:
    """Read ``[tool.feeler]`` from *path*, or from the nearest pyproject.toml above *start* (cwd)."""
    if path is None:
        folder = os.path.abspath(start or os.getcwd())
        while True:
            candidate = os.path.join(folder, "pyproject.toml")
            if os.path.lexists(candidate) and not os.path.isdir(candidate):  # a FIFO here is refused, not skipped
                path = candidate
                break
            parent = os.path.dirname(folder)
            if parent == folder:
                return Config()
            folder = parent
    data = read_toml(path, what="the config file", fix="fix the file: it must be UTF-8 TOML")
    tool = data.get("tool", {})
    if not isinstance(tool, dict):
        raise UsageError(f"{path}: tool={tool!r} must be a table ([tool.feeler] goes under [tool])")
    table = tool.get("feeler", {})
    if not isinstance(table, dict):
        raise UsageError(f"{path}: [tool.feeler] must be a table, got {type(table).__name__} {table!r}"[:300])
    table = _renamed(dict(table))
    for key, value in table.items():
        if key not in _KEYS:
            close = difflib.get_close_matches(key, list(_KEYS), n=1)
            hint = f"; did you mean {close[0]!r}?" if close else f"; known keys: {', '.join(sorted(_KEYS))}"
            raise UsageError(f"{path}: unknown key [tool.feeler] {key}{hint}")
        types, what = _KEYS[key]
        if not isinstance(value, types) or (isinstance(value, bool) and bool not in types):
            raise UsageError(f"{path}: [tool.feeler] {key}={value!r} must be {what}"[:400])
        _check_inside(path, key, value)
    if "depth" in table:
        from feeler.depth import DEPTHS

        if table["depth"] not in DEPTHS:
            raise UsageError(f"{path}: [tool.feeler] depth={table['depth']!r} must be one of {', '.join(DEPTHS)}")
    config = Config(source=path, values=table)
    config.targets()  # every target entry is checked now, not when first used
    return config


def _check_inside(path: str, key: str, value: Any) -> None:
    """Values inside lists and tables, and numbers: strings in lists, finite positive seconds."""
    where = f"{path}: [tool.feeler] {key}"
    if isinstance(value, float) and not math.isfinite(value):
        raise UsageError(f"{where}={value!r} must be a finite number")
    if key == "timeout" and value <= 0:
        raise UsageError(f"{where}={value!r} must be a positive number of seconds")
    if key == "timeout" and value > 86_400:  # as --timeout (cli_options.MAX_SECONDS): a wait ends within a day
        raise UsageError(f"{where}={value!r} is more than a day; give at most 86400 seconds")
    if isinstance(value, list):
        bad = next((item for item in value if not isinstance(item, str)), None)
        if bad is not None:
            raise UsageError(f"{where} must list only strings; {bad!r} is {type(bad).__name__}"[:400])
    if key == "budgets":
        for name, seconds in value.items():
            if isinstance(seconds, bool) or not isinstance(seconds, (int, float)) or not (
                math.isfinite(seconds) and seconds > 0
            ):
                raise UsageError(f"{where}.{name}={seconds!r} must be a positive number of seconds"[:400])


def _renamed(table: dict[str, Any]) -> dict[str, Any]:
    """*table* with old key names moved to their new names (a notice for each); the new name wins."""
    from feeler._deprecated import notice
    from feeler.depth import OLD_PROFILES

    for old, new in RENAMED_KEYS.items():
        if old in table:
            notice(f"[tool.feeler] {old}", f"{new}")
            value = table.pop(old)
            if old == "profile" and isinstance(value, str):
                value = OLD_PROFILES.get(value, value)
            table.setdefault(new, value)
    return table
