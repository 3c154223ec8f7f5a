"""Replay files: the exact request that showed a finding, and where to send it again.

A replay file is JSON (format ``feeler-replay/2``): ``format``, ``target`` (how to reach the server: never
a secret: env and header *names* only), ``protocolVersion``, ``request`` (the exact text sent), ``answer``
(what came back then) and ``finding`` (its ``--format json`` form). It lives at
``<replay dir>/<target>/<tool or _server>/<id>.replay.json`` (``<target>`` is the ``[tool.feeler]`` target
name, recorded as ``target.name``, or a slug of the spec). ``feeler replay FILE`` re-sends the request and
runs the finding's check (by its current name) on the new answer. A case whose verdict depends on the
server's world keeps its ``base`` (the arguments that entered: the no-go case's arguments with the
keyword intact, or a bound case's value one step inside the bound); the replay sends the base first and
cannot tell (exit 2) when it no longer enters. Files of format ``feeler-replay/1`` are still read.
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass, field
from datetime import datetime, timezone
from typing import Any

from feeler._files import write_text_atomic
from feeler._read import read_json
from feeler.catalog import Tool
from feeler.check.findings import Finding
from feeler.errors import TargetError, UsageError
from feeler.target import Target, target_slug

__all__ = ["REPLAY_FORMAT", "ReplayOutcome", "load_replay", "replay", "replay_target", "write_replay"]

REPLAY_FORMAT = "feeler-replay/2"
#: Older formats still read (``revision`` instead of ``protocolVersion``; snake_case finding keys).
OLD_REPLAY_FORMATS = ("feeler-replay/1",)
#: Checks whose verdict rests on a base that entered (world.anchor): their replay sends the base first.
ANCHORED_CHECKS = frozenset({"nogo_stops", "bounds_honoured"})
#: The folder of findings that concern no tool (server-wide probes, the catalog).
SERVER_FOLDER = "_server"


def write_replay(folder: str, target: Target, finding: Finding, settings: Any = None) -> str:
    """Write the replay file of *finding* under *folder*/<target>/<tool or _server>/ and return its path."""
    data = {
        "format": REPLAY_FORMAT,
        "recorded": datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "target": target.to_json(),
        "protocolVersion": finding.revision,
        "request": finding.request_text,
        "answer": finding.answer_text,
        "finding": {k: v for k, v in finding.to_json().items() if k != "replay"},
    }
    if settings is not None:  # judged again with the same strictness and budgets (never the secrets)
        data["settings"] = {"strictGo": bool(settings.strict_go), "latencyBudget": dict(settings.latency_budget)}
    if finding.extra.get("sequence"):
        data["sequence"] = finding.extra["sequence"]  # a chain: every call, linked by earlier answers
    if "base" in finding.extra:
        data["base"] = {"arguments": finding.extra["base"]}  # sent first on replay: does the world still hold?
    tool_folder = target_slug(finding.tool) if finding.tool else SERVER_FOLDER
    path = os.path.join(folder, target.slug(), tool_folder, f"{finding.short_id}.replay.json")
    write_text_atomic(path, json.dumps(data, indent=2, ensure_ascii=False, sort_keys=True) + "\n")
    return path


def load_replay(path: str) -> dict[str, Any]:
    data = read_json(path, what="the replay file", fix="give a replay file written by `feeler check`")
    if data.get("format") not in (REPLAY_FORMAT, *OLD_REPLAY_FORMATS):
        raise UsageError(f"{path}: not a feeler replay file (expected format {REPLAY_FORMAT!r})")
    for key, kind in (("target", dict), ("request", str), ("finding", dict)):
        if not isinstance(data.get(key), kind):
            raise UsageError(f"{path}: the replay file has no {key!r} {'object' if kind is dict else 'string'}; "
                             "write it again with `feeler check`")
    _check_target(path, data["target"])
    if data["format"] in OLD_REPLAY_FORMATS:
        data = _from_old_replay(data)
    return data


#: The target keys a replay file records (``Target.to_json``) and the JSON type each must have.
_TARGET_KEYS: dict[str, tuple[type, str]] = {
    "kind": (str, "a string"), "command": (list, "a list of strings"), "url": (str, "a string"),
    "module": (str, "a string"), "cwd": (str, "a string"), "envNames": (list, "a list of strings"),
    "headerNames": (list, "a list of strings"), "bearerEnv": (str, "a string"),
}  # fmt: skip


def _check_target(path: str, target: dict[str, Any]) -> None:
    """Refuse a recorded target with a wrong type in it (a string command would be run letter by letter)."""
    for key, (kind, what) in _TARGET_KEYS.items():
        value = target.get(key)
        if value is None:
            continue
        if not isinstance(value, kind) or (kind is list and not all(isinstance(v, str) for v in value)):
            raise UsageError(f"{path}: the replay file's target.{key} must be {what}, got {type(value).__name__} "
                             f"{str(value)[:60]!r}; write it again with `feeler check`")


def _from_old_replay(data: dict[str, Any]) -> dict[str, Any]:
    """A ``feeler-replay/1`` file with today's key names."""
    out = dict(data)
    out["protocolVersion"] = out.pop("revision", None)
    finding = dict(out.get("finding") or {})
    if "revision" in finding:
        finding["protocolVersion"] = finding.pop("revision")
    if "path" in finding:
        from feeler._json import to_pointer

        path = finding.pop("path")
        try:
            finding["instanceLocation"] = to_pointer(path)
        except ValueError:
            finding["instanceLocation"] = path
    out["finding"] = finding
    return out


@dataclass
class ReplayOutcome:
    """What a replay saw.

    :param reproduced: the finding's check found the same problem (same error class) again.
    :param messages: the messages of those problems.
    :param inconclusive: why the replay could not judge (a chain whose linked value the new answers do
        not hold, a base that no longer enters); ``reproduced`` is then false and means nothing.
    :param check: the check that judged (the current name of the one the file names).
    :param notes: what the user should know about how it was judged (a renamed check, a missing env).
    :param base_request: the base call sent first, if any.
    """

    request: str
    answer: str | None
    reproduced: bool
    messages: list[str]
    inconclusive: str | None = None
    check: str = ""
    notes: list[str] = field(default_factory=list)
    base_request: str | None = None


def replay_target(data: dict[str, Any], config: Any = None, env: dict[str, str] | None = None) -> tuple[Target, list[str]]:
    """The target a replay file names: the ``[tool.feeler]`` target of that name (with its configured env),
    else the one recorded; *env* (``--env``) merged in. Also notes for env names no value is known for."""
    recorded = data["target"]
    named = config.targets() if config is not None else {}
    if recorded.get("name") in named:
        target = named[recorded["name"]].merged(env=env)
    else:
        target = Target.from_json(recorded).merged(env=env)
    missing = [n for n in recorded.get("envNames", []) if n not in target.env]
    notes = [f"the server ran with {name} set, and it is not set now: give it with --env {name}=VALUE" for name in missing]
    return target, notes


class _Case:
    def __init__(self, finding: dict[str, Any]) -> None:
        self.kind = finding.get("kind")
        self.keyword = finding.get("keyword")
        from feeler._json import json_path, path_parts

        where = finding.get("instanceLocation")
        self.path = json_path(path_parts(where)) if isinstance(where, str) else None
        self.schema_path = finding.get("keywordLocation") or ""
        self.source = finding.get("source")
        self.is_boundary = bool(finding.get("boundary"))
        self.arguments = finding.get("arguments")


def replay(data: dict[str, Any], *, timeout: float = 30.0, target: Target | None = None) -> ReplayOutcome:
    """Send the recorded request again; say whether the same check finds the same problem.

    The check is the one the file names, by its current name (a former name is judged by the check it
    became, with a note). A recorded base is sent first and must enter again; a ``bounds_honoured``
    finding's base is the value one step inside the bound (recomputed for files that do not hold it).
    """
    from feeler.check.registry import CHECKS, CallContext, CheckSettings, current_name
    from feeler.config import load_config
    from feeler.connect import capture, open_session
    from feeler.redact import redactor_for

    tgt = target or Target.from_json(data["target"])
    secrets = redactor_for(tgt, load_config().values).values  # secret_env/secrets of [tool.feeler] too
    finding = data["finding"]
    stored_name = str(finding.get("check", ""))
    name = current_name(stored_name)
    notes = [f"the file names the former check {stored_name!r}; judged by {name!r}"] if name != stored_name else []
    check = CHECKS.get(name)
    wanted = finding.get("errorClass", str(finding.get("signature", "")).split("|")[-1])
    session = open_session(tgt, revision=data.get("protocolVersion"), timeout=timeout)
    try:
        catalog = capture(session)
        if data.get("sequence"):
            from feeler.world.chains import replay_sequence

            def make_ctx(chain_tool: Tool | None) -> CallContext:
                settings = CheckSettings(secrets=secrets)
                return CallContext("chain", chain_tool, str(session.revision), str(session.era), settings)

            seen = replay_sequence(session, data, make_ctx, catalog, timeout)
            if seen.lost is not None:
                return ReplayOutcome(seen.request, seen.answer, False, [], seen.lost, name, notes)
            same = [p for p in seen.problems if not wanted or p.error_class == wanted]
            return ReplayOutcome(seen.request, seen.answer, bool(same), [p.message for p in same], None, name, notes)
        tool = None
        if finding.get("tool"):
            try:
                tool = catalog.tool(finding["tool"])
            except KeyError:
                tool = Tool({"name": finding["tool"]})
        case: Any = _Case(finding)
        kind = finding.get("kind") or "go"
        if kind == "probe":
            from feeler.generate import protocol_probes

            probe_name = str(finding.get("signature", "")).split("|")[-1].split(":")[0]
            meta = session.meta() if session.era == "stateless" else None
            probes = {p.name: p for p in protocol_probes(str(session.revision), finding.get("tool") or "tool", meta)}
            case = probes.get(probe_name, case)
        ctx_kind = "alive" if name == "server_alive" else kind
        stored = data.get("settings") or {}
        settings = CheckSettings(
            strict_go=bool(stored.get("strictGo", False)),
            latency_budget={str(k): float(v) for k, v in (stored.get("latencyBudget") or {}).items()},
            secrets=secrets,
        )
        ctx = CallContext(ctx_kind, tool, str(session.revision), str(session.era), settings, case=case)
        base_arguments = _base_arguments(data, name, kind, tool, case)
        base_request = None
        if base_arguments is not None and tool is not None:
            base_outcome, base_request, refusal = _send_base(session, tool.name, base_arguments, timeout)
            ctx.base = base_outcome
            if base_outcome != "entered":
                why = (f"the base call (these arguments with {case.keyword!r} intact"
                       if name != "bounds_honoured" else "the base call (the value one step inside the bound")
                return ReplayOutcome(
                    data["request"], None, False, [],
                    f"{why}) was {base_outcome or 'not answered'} now{': ' + refusal if refusal else ''}; the "
                    "server's world differs from the recorded run (a value it needs, such as a record made "
                    "earlier, is gone): start the server as it was then, or run feeler check again",
                    name, notes, base_request,
                )  # fmt: skip
        answer = None
        try:
            expect = getattr(case, "expects_answer", True)
            ex = session.send_raw(data["request"], timeout=timeout, expect_answer=expect)
            answer = next((f.text for f in reversed(ex.frames) if f.direction == "in"), None)
            if ctx_kind == "alive":
                ctx.exchange = session.ping(timeout=min(timeout, 5.0))
            else:
                ctx.exchange = ex
        except TargetError as exc:
            ctx.failure = exc
        problems = check.run(ctx) if check is not None else []
        same = [p for p in problems if not wanted or p.error_class == wanted]
        inconclusive = None
        if not same and name == "nogo_stops" and base_arguments is None:
            from feeler.world.anchor import outcome

            if outcome(ctx.exchange, ctx.failure) == "stopped":
                inconclusive = ("the no-go case was stopped, but the file holds no base that entered, so the "
                                "refusal may have another cause (unattributed): run feeler check again")
        # The stored finding's own problem first: the answer may show other problems too.
        return ReplayOutcome(data["request"], answer, bool(same), [p.message for p in same], inconclusive, name, notes,
                             base_request)
    finally:
        session.close()


def _base_arguments(data: dict[str, Any], check: str, kind: str, tool: Tool | None, case: Any) -> Any | None:
    """The arguments to send before the recorded request, or None: the recorded base, or for a bound
    finding of a file that does not hold one, the value one step inside the bound."""
    if check not in ANCHORED_CHECKS:
        return None
    base = data.get("base")
    if isinstance(base, dict) and "arguments" in base:
        return base["arguments"]
    if check == "bounds_honoured" and kind == "go" and tool is not None and case.arguments is not None:
        from feeler.world.anchor import inside_arguments

        try:
            return inside_arguments(tool.input_schema, case)
        except Exception:  # a schema feeler cannot compile: no base, judged as recorded
            return None
    return None


def _send_base(session: Any, tool: str, arguments: Any, timeout: float) -> tuple[str | None, str, str]:
    """Call *tool* with the base *arguments*: its outcome, the request text, and a refusal's text."""
    from feeler.world.anchor import outcome, refusal_text

    try:
        ex = session.call_tool(tool, arguments, timeout=timeout)
    except TargetError as exc:
        return "broke", json.dumps({"name": tool, "arguments": arguments}, ensure_ascii=False), str(exc)
    result = outcome(ex)
    return result, ex.request_text, refusal_text(ex)[:300] if result != "entered" else ""
