"""The campaign engine: rotate through the tools for a time budget, growing the sampled cases each round.

Round 0 runs every case kind for each tool (catalog checks, boundary and sampled go cases, no-go cases,
probes), like ``feeler check``; after the round's last tool come the chains (sequences of calls linked
by returned values, :mod:`feeler.world`), growing like the sampled cases. Each later round samples more
go cases per tool (``samples`` times ``growth`` per round, up to ``max_samples``) with a new seed, 20 by
hypothesis and the rest from the fast sampler in a plain loop; the example database (:mod:`feeler.campaign.database`) gives the
failing examples of earlier runs first, and hypothesis shrinks a failure the run has not shrunk yet
(:meth:`feeler.check.runner.Runner._drawn_go`). The steps of one rotation are the table :data:`ROTATION`
(``cases``, then ``chains``): register another with :func:`rotation_step`.

With ``--shard i/n`` the tools are split in groups: tools that depend on each other (an identifier-like
input of one is related to an output of another, :func:`tool_groups`) stay in one shard, so every shard
can make the values its tools need and run its own chains. A shard calls and reports only its tools.

The state (round, position, sampled cases done in the current step, time used, findings, counters) is
written atomically to ``state.json`` in the campaign folder, next to the call log ``calls.jsonl``, after
every step and every ``save_every_calls`` calls or ``save_every_seconds`` seconds (CampaignOptions). Started
again after an interruption, the campaign continues from that step, skipping the sampled cases already
made (round 0 of the interrupted tool is made again: its calls are counted again, as the call log
records them); the time budget counts the time of every start. A finished campaign starts afresh next
time (the example database stays). A campaign that never reached the server leaves no state behind.
"""

from __future__ import annotations

import dataclasses
import json
import os
import re
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from feeler._files import write_text_atomic
from feeler.errors import UsageError

__all__ = ["ROTATION", "Campaign", "CampaignOptions", "parse_duration", "parse_shard", "rotation_step", "shard_tools"]

STATE_FORMAT = "feeler-campaign/1"
#: latency samples per tool kept in the state file (the report's percentiles after a resume use them)
_STATE_DURATIONS = 2000


def parse_duration(text: str) -> float:
    """``90``, ``90s``, ``15m``, ``2h``, ``1h30m`` -> seconds."""
    value = text.strip().lower()
    if re.fullmatch(r"\d+(\.\d+)?", value):
        return float(value)
    parts = re.fullmatch(r"(?:(\d+)h)?(?:(\d+)m)?(?:(\d+(?:\.\d+)?)s)?", value)
    if not value or parts is None or not any(parts.groups()):
        raise UsageError(f"--budget {text!r}: expected a duration such as 90s, 15m, 2h or 1h30m")
    h, m, s = parts.groups()
    return int(h or 0) * 3600 + int(m or 0) * 60 + float(s or 0)


def parse_shard(text: str | None) -> tuple[int, int] | None:
    """``i/n`` (1-based) -> (i, n)."""
    if not text:
        return None
    match = re.fullmatch(r"\s*(\d+)\s*/\s*(\d+)\s*", text)
    if match is None or not 1 <= int(match.group(1)) <= int(match.group(2)):
        raise UsageError(f"--shard {text!r}: expected i/n with 1 <= i <= n, e.g. 1/4")
    return int(match.group(1)), int(match.group(2))


def _outputs(tool: Any) -> list[tuple[str, frozenset[str]]]:
    """Property names in *tool*'s output schema, each with the context nouns of where it sits."""
    from feeler.world.names import nouns

    out: list[tuple[str, frozenset[str]]] = []

    def walk(schema: Any, context: frozenset[str], depth: int) -> None:
        if depth > 12 or len(out) > 500:
            return
        if isinstance(schema, list):
            for item in schema:
                walk(item, context, depth + 1)
            return
        if not isinstance(schema, dict):
            return
        props = schema.get("properties")
        if isinstance(props, dict):
            for name, sub in props.items():
                if isinstance(name, str):
                    out.append((name, context))
                    walk(sub, context | nouns(name), depth + 1)
        for key, value in schema.items():
            if key != "properties" and isinstance(value, (dict, list)):
                walk(value, context, depth + 1)

    walk(tool.output_schema, nouns(tool.name), 0)
    return out


def _wanted(tool: Any) -> list[str]:
    """The identifier-like input names of *tool* (those a returned value may fill)."""
    from feeler.world.learn import _property_names
    from feeler.world.names import identifier_like

    return [name for name in dict.fromkeys(_property_names(tool.input_schema)) if identifier_like(name)]


def _given(tool: Any) -> list[tuple[str, frozenset[str]]]:
    """What *tool* returns: the properties of its output schema, or, with no output schema, an identifier
    about its nouns (``create_record`` -> ``record_id``)."""
    from feeler.world.names import ID_WORDS, nouns

    if isinstance(tool.output_schema, dict):
        return _outputs(tool)
    giver_nouns = nouns(tool.name)
    return [(word, giver_nouns) for word in (*sorted(ID_WORDS), *sorted(giver_nouns))]


def _consumes(wanted: list[str], taker_nouns: frozenset[str], given: list[tuple[str, frozenset[str]]]) -> bool:
    """True when an identifier-like input of a taker (*wanted*, :func:`_wanted`) may be filled by what a
    giver returns (*given*, :func:`_given`): a related name (:func:`feeler.world.names.related`, the
    rule the learning uses)."""
    from feeler.world.names import related

    return any(related(name, o, ctx, taker_nouns) for name in wanted for o, ctx in given)


def tool_groups(tools: list[Any]) -> list[list[str]]:
    """*tools* in groups of tools that depend on each other (directly or through others), each group
    sorted by name, the groups by their first name."""
    from feeler.world.names import nouns

    names = sorted(t.name for t in tools)
    parent = {name: name for name in names}

    def root(name: str) -> str:
        while parent[name] != name:
            parent[name] = parent[parent[name]]
            name = parent[name]
        return name

    wanted = [_wanted(t) for t in tools]  # each tool's inputs and outputs read once, not once per pair
    given = [_given(t) for t in tools]
    for taker, want in zip(tools, wanted):
        if not want:
            continue
        taker_nouns = nouns(taker.name)
        for giver, gives in zip(tools, given):
            if taker.name != giver.name and root(taker.name) != root(giver.name) and _consumes(want, taker_nouns, gives):
                parent[root(taker.name)] = root(giver.name)
    groups: dict[str, list[str]] = {}
    for name in names:
        groups.setdefault(root(name), []).append(name)
    return sorted(groups.values())


def shard_tools(tools: list[Any], shard: tuple[int, int] | None) -> list[str]:
    """The tool names of one shard. *tools* are catalog tools (or bare names, which depend on nothing).

    Tools that depend on each other (:func:`tool_groups`) stay together; the groups, largest first (then
    by name), each go to the shard with the fewest tools so far (the lowest index on a tie). Every tool
    is in exactly one shard, whatever order the server lists them in."""
    if shard is None:
        return sorted(t if isinstance(t, str) else t.name for t in tools)
    objects = [t for t in tools if not isinstance(t, str)]
    groups = tool_groups(objects) + [[t] for t in tools if isinstance(t, str)]
    index, count = shard
    load = [0] * count
    mine: list[str] = []
    for group in sorted(groups, key=lambda g: (-len(g), g)):
        target = min(range(count), key=lambda k: (load[k], k))
        load[target] += len(group)
        if target == index - 1:
            mine += group
    return sorted(mine)


@dataclass
class CampaignOptions:
    """How long and how a campaign runs.

    :param budget: seconds for the whole campaign (every start of it counts).
    :param folder: the campaign folder (state, call log); one per target and shard.
    :param samples: drawn go cases per tool in round 0; round r draws ``samples * growth**r``.
    :param example_db: a hypothesis ``ExampleDatabase`` or None.
    """

    budget: float
    folder: str
    shard: tuple[int, int] | None = None
    samples: int = 20
    growth: float = 2.0
    max_samples: int = 2000
    seed: int = 0
    example_db: Any = None
    example_db_name: str | None = None
    fresh: bool = False
    #: the state is also saved after this many calls or seconds within a step (bounded cost; a kill loses less)
    save_every_calls: int = 2000
    save_every_seconds: float = 10.0


#: A rotation step: ``step(campaign, tool, round)`` runs one tool's share of one round.
RotationStep = Callable[["Campaign", Any, int], None]
ROTATION: dict[str, RotationStep] = {}


def rotation_step(name: str) -> Callable[[RotationStep], RotationStep]:
    """Register a step of the rotation (run for each tool in each round, in registration order)."""

    def register(func: RotationStep) -> RotationStep:
        ROTATION[name] = func
        return func

    return register


@rotation_step("cases")
def _cases(campaign: Campaign, tool: Any, round_no: int) -> None:
    """Round 0: every case kind, as ``feeler check``; later rounds: more sampled go cases, a new seed."""
    runner = campaign.runner
    if round_no == 0:
        runner.options.samples = campaign.options.samples
        runner.run_tool(tool)
        return
    stats = runner.stats(tool)
    if stats.skipped or stats.schema_problem or runner.skip_reason(tool) or stats.timeouts >= runner.options.max_timeouts_per_tool:
        return
    # A resumed step makes the same cases as before the interruption (the count depends on the time left,
    # which has changed), then skips those already sent.
    runner.options.samples = campaign.resume_samples or campaign.samples_for(round_no)
    runner.options.sample_seed = campaign.options.seed + round_no
    runner.drawn_skip, campaign.resume_skip, campaign.resume_samples = campaign.resume_skip, 0, 0
    runner._drawn_go(tool, stats)


#: chain runs per round grow like the sampled cases, up to this many
MAX_CHAIN_RUNS = 400
#: after round 0 the chains get about this share of a round's time at most (beyond the base chain_runs):
#: a chain step goes through hypothesis' stateful engine and costs about twice a sampled case
CHAIN_SHARE = 0.25


@rotation_step("chains")
def _chains(campaign: Campaign, tool: Any, round_no: int) -> None:
    """Once per round, after its last tool: chains of calls linked by returned values (feeler.world),
    over the campaign's tools (a shard keeps the tools that depend on each other together)."""
    runner = campaign.runner
    if campaign.position != len(campaign.tool_names) - 1 or runner.options.chain_runs <= 0:
        return
    runs = min(MAX_CHAIN_RUNS, int(runner.options.chain_runs * campaign.options.growth**round_no))
    if campaign.chain_rate > 0:  # runs per second of the last chain phase: keep the chains to their share
        allowed = CHAIN_SHARE / (1 - CHAIN_SHARE) * campaign.round_seconds.get("cases", 0.0) * campaign.chain_rate
        runs = max(runner.options.chain_runs, min(runs, int(allowed)))
    runner.world.discover(runner)
    started = time.monotonic()
    runner.world.chains(runner, runs=runs, steps=runner.options.chain_steps)
    spent = time.monotonic() - started
    campaign.chain_rate = runs / spent if spent > 0 else 0.0


class Campaign:
    """One campaign against one target (a :class:`~feeler.check.runner.Runner` underneath).

    :param on_call: called after each call (after the call log), e.g. for live progress.
    """

    def __init__(self, runner: Any, options: CampaignOptions, *, on_call: Callable[..., None] | None = None) -> None:
        from feeler.campaign.calllog import CallLog

        self.runner = runner
        self.options = options
        self.state_path = os.path.join(options.folder, "state.json")
        self.log_path = os.path.join(options.folder, "calls.jsonl")
        runner.options.example_db = options.example_db
        self.round = 0
        self.position = 0
        self.used = 0.0  # seconds spent by earlier starts
        self.resumed = 0
        self.calls = 0
        self.started_at: str | None = None
        self.tool_names: list[str] = []
        #: sampled go cases of the current step made before the interruption (skipped when it resumes)
        self.resume_skip = 0
        #: the interrupted step's sampled-case count (its cases are remade the same, then skipped up to resume_skip)
        self.resume_samples = 0
        #: seconds per rotation step in the current round, and chain runs per second of the last chain phase
        self.round_seconds: dict[str, float] = {}
        self.chain_rate = 0.0
        self._load()
        self._made = _missing_folders(options.folder)  # removed again if nothing is done
        self.log = CallLog(self.log_path)
        self._extra_on_call = on_call
        self._clock = time.monotonic()
        self._saved_at = (self._clock, self.calls)
        self._reached = False  # the server answered this start (else no state is left behind)
        runner.on_call = self._on_call

    # -- state ---------------------------------------------------------------------------------------
    def _load(self) -> None:
        from feeler.check.findings import Finding

        if self.options.fresh or not os.path.exists(self.state_path):
            self._start_afresh()
            return
        from feeler._read import read_json

        state = read_json(self.state_path, what="the campaign state", fix="delete it or pass --fresh to start afresh")
        if state.get("format") != STATE_FORMAT or state.get("done"):
            self._start_afresh()
            return
        self.round, self.position = state["round"], state["position"]
        self.used, self.calls = state["used"], state["calls"]
        self.resumed = state["resumed"] + 1
        self.started_at = state["startedAt"]
        self.tool_names = state["tools"]
        self.resume_skip = state.get("stepSampled", 0) if self.round > 0 else 0
        self.resume_samples = state.get("stepSamples", 0) if self.resume_skip else 0
        self.runner.report.restarts = state.get("restarts", 0)
        names = {f.name for f in dataclasses.fields(Finding)}
        for data in state["findings"]:
            fields = {_FINDING_FIELDS.get(k, _snake(k)): v for k, v in data.items()}
            self.runner.report.findings.add(Finding(**{k: v for k, v in fields.items() if k in names}))
        for data in state["stats"]:
            self.runner.report.tools[data["name"]] = _stats_from(data)

    def _start_afresh(self) -> None:
        from feeler.report.document import now_iso

        for path in (self.state_path, self.log_path):
            if os.path.exists(path):
                os.unlink(path)
        self.started_at = now_iso()

    def save(self, *, done: bool = False) -> None:
        """Write the state atomically (a kill mid-write leaves the previous state whole)."""
        runner = self.runner
        state = {
            "format": STATE_FORMAT,
            "target": runner.target.name,
            "shard": list(self.options.shard) if self.options.shard else None,
            "startedAt": self.started_at,
            "round": self.round,
            "position": self.position,
            "stepSampled": runner.drawn_done if self.round > 0 else 0,
            "stepSamples": runner.options.samples if self.round > 0 else 0,
            "used": round(self.elapsed(), 3),
            "calls": self.calls,
            "resumed": self.resumed,
            "done": done,
            "tools": self.tool_names,
            "restarts": runner.report.restarts,
            "findings": [_finding_data(f) for f in runner.report.findings],
            "stats": [_stats_data(s) for s in runner.report.tools.values()],
        }
        self.log.flush()  # the log first: the state never counts a call the log does not have yet
        write_text_atomic(self.state_path, json.dumps(state, ensure_ascii=False, default=str) + "\n")
        self._saved_at = (time.monotonic(), self.calls)

    # -- time and growth -----------------------------------------------------------------------------
    def elapsed(self) -> float:
        return self.used + (time.monotonic() - self._clock)

    def remaining(self) -> float:
        return max(0.0, self.options.budget - self.elapsed())

    def rate(self) -> float:
        """Calls per second so far in this start."""
        spent = time.monotonic() - self._clock
        return self.log.lines / spent if spent > 0 else 0.0

    def samples_for(self, round_no: int) -> int:
        """Sampled go cases for one tool in *round_no*: grown, capped, and small enough for the time left."""
        grown = min(self.options.max_samples, int(self.options.samples * self.options.growth**round_no))
        rate = self.rate()
        tools = max(1, len(self.tool_names))
        if rate > 0:
            grown = min(grown, max(1, int(self.remaining() * rate / tools)))
        return max(1, grown)

    def _on_call(self, tool: Any, case: Any, ctx: Any, failed: list[str]) -> None:
        self.log.hook(tool, case, ctx, failed)
        self.calls += 1
        if self._extra_on_call is not None:
            self._extra_on_call(self)
        now = time.monotonic()
        if now - self._clock > self.options.budget - self.used:
            raise _BudgetSpent()
        at, calls = self._saved_at
        if self.calls - calls >= self.options.save_every_calls or now - at >= self.options.save_every_seconds:
            self.save()  # inside the runner's held() block: the state and the call log agree

    # -- the run -------------------------------------------------------------------------------------
    def run(self) -> Any:
        """Rotate until the budget is spent; returns the runner's :class:`RunReport`. An interruption
        (KeyboardInterrupt) saves the state first and is raised again."""
        runner = self.runner
        try:
            runner.open()
            self._reached = True
            if not self.tool_names:
                self.tool_names = shard_tools(runner.tools(), self.options.shard)
            runner.options.only = list(self.tool_names)
            if self.options.shard is not None and self.options.shard[0] != 1:
                runner.report.tools_audited = True  # catalog-wide checks: shard 1 reports them
            tools = {t.name: t for t in runner.tools()}
            self.save()
            while self.remaining() > 0 and self.tool_names:
                name = self.tool_names[self.position]
                tool = tools.get(name)
                if tool is not None:
                    for step_name, step in list(ROTATION.items()):
                        started = time.monotonic()
                        step(self, tool, self.round)
                        self.round_seconds[step_name] = self.round_seconds.get(step_name, 0.0) + time.monotonic() - started
                self.position += 1
                runner.drawn_done = 0
                if self.position >= len(self.tool_names):
                    self.position, self.round = 0, self.round + 1
                    self.round_seconds = {}
                self.save()
        except _BudgetSpent:
            pass
        except BaseException:
            self._finish(done=False)
            raise
        self._finish(done=True)
        return runner.report

    def _finish(self, *, done: bool) -> None:
        try:
            self.runner.close()
        finally:
            self.runner.write_replays()
            self.log.close()
            if self._reached or self.resumed:
                self.save(done=done)
            else:  # the server was never reached: nothing to continue next time, no campaign left behind
                self._forget()

    def _forget(self) -> None:
        for path in (self.state_path, self.log_path):
            if os.path.exists(path) and (path == self.log_path or not self.resumed):
                os.unlink(path)
        for folder in self._made:
            try:
                os.rmdir(folder)  # only if empty
            except OSError:
                break

    def summary(self) -> dict[str, Any]:
        """The ``campaign`` object of the report document."""
        from feeler.campaign.database import redact_url

        return {
            "budgetSeconds": self.options.budget,
            "rounds": self.round,
            "resumed": self.resumed,
            "callLog": self.log_path,
            "exampleDatabase": redact_url(self.options.example_db_name) if self.options.example_db_name else None,
        }


def _missing_folders(folder: str) -> list[str]:
    """The folders that do not exist yet on the way to *folder*, deepest first."""
    out, path = [], os.path.abspath(folder)
    while not os.path.exists(path) and os.path.dirname(path) != path:
        out.append(path)
        path = os.path.dirname(path)
    return out


class _BudgetSpent(BaseException):
    """Raised from the call hook when the budget is spent, to stop mid-step. A BaseException, so that
    hypothesis passes it on at once instead of shrinking it as a failure."""


#: Finding fields stored under the name every JSON output uses (the rest: camelCase of the field name)
_FINDING_KEYS = {"revision": "protocolVersion", "path": "instanceLocation"}
_FINDING_FIELDS = {v: k for k, v in _FINDING_KEYS.items()}


def _camel(name: str) -> str:
    head, *rest = name.split("_")
    return head + "".join(part[:1].upper() + part[1:] for part in rest)


def _snake(name: str) -> str:
    return re.sub(r"(?<=[a-z0-9])([A-Z])", lambda m: "_" + m.group(1).lower(), name)


def _finding_data(finding: Any) -> dict[str, Any]:
    data = {_FINDING_KEYS.get(f.name, _camel(f.name)): getattr(finding, f.name) for f in dataclasses.fields(finding)}
    data["instanceLocation"] = finding.instance_location  # a JSON Pointer; read back as the finding's path
    return data


#: not kept across a resume: cases and bases are remade, the world summary starts again each run
_STATS_SKIP = ("cases", "coverage", "durations", "world", "bases")


#: ToolStats counter fields -> (group, key) as every JSON output names them (ToolStats.counters)
_COUNTERS = {
    "go_calls": ("go", "calls"), "go_entered": ("go", "entered"), "go_is_error": ("go", "stopped"),
    "nogo_calls": ("noGo", "calls"), "nogo_stopped_protocol": ("noGo", "stoppedByCode"),
    "nogo_stopped_is_error": ("noGo", "stoppedByIsError"), "nogo_entered": ("noGo", "entered"),
}  # fmt: skip


#: case kinds -> their camelCase key in the state (``ToolStats.seconds`` is keyed by case kind)
_KIND_KEYS = {"no-go": "noGo"}


def _stats_data(stats: Any) -> dict[str, Any]:
    skip = (*_STATS_SKIP, *_COUNTERS)
    data = {_camel(f.name): getattr(stats, f.name) for f in dataclasses.fields(stats) if f.name not in skip}
    data.update(stats.counters())
    data["durations"] = stats.durations[-_STATE_DURATIONS:]
    data["seconds"] = {_KIND_KEYS.get(kind, kind): value for kind, value in stats.seconds.items()}
    data["coverage"] = [{"keywordLocation": f"{c.schema_path}/{c.keyword}", "keyword": c.keyword, "go": c.go,
                         "noGo": c.nogo, "reason": c.reason} for c in stats.coverage]  # fmt: skip
    return data


def _coverage_from(data: dict[str, Any]) -> Any:
    from feeler.generate.coverage import KeywordCoverage

    if "keywordLocation" not in data:  # a state of the previous release
        return KeywordCoverage(**data)
    node = str(data["keywordLocation"])[: -len(str(data["keyword"])) - 1]
    return KeywordCoverage(node, data["keyword"], data["go"], data["noGo"], data.get("reason"))


def _stats_from(data: dict[str, Any]) -> Any:
    from feeler.check.runner import ToolStats

    data = {_snake(k): v for k, v in data.items()}
    for field_name, (group, key) in _COUNTERS.items():
        if isinstance(data.get(_snake(group)), dict):
            data[field_name] = data[_snake(group)].get(key, 0)
    coverage = [_coverage_from(c) for c in data.pop("coverage", [])]
    kinds = {key: kind for kind, key in _KIND_KEYS.items()}
    data["seconds"] = {kinds.get(key, key): value for key, value in (data.get("seconds") or {}).items()}
    names = {f.name for f in dataclasses.fields(ToolStats)}
    stats = ToolStats(**{k: v for k, v in data.items() if k in names})
    stats.coverage = coverage
    return stats
