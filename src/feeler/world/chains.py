"""Call chains: sequences in which a later call's arguments come from an earlier answer.

A chain run is hypothesis' stateful testing (``hypothesis.stateful.RuleBasedStateMachine``; see the
hypothesis documentation, "Stateful tests"). The machine is built from the catalog:

* one **bundle** ``learned`` holds :class:`Token` values taken from successful answers (the values
  :func:`feeler.world.learn.answer_values` finds), each with the step and the place it came from, and the
  input slots of other tools it fits (related name, oracle-accepted in that tool's base arguments);
* per tool, a **plain rule** calls it with one of its base arguments: go cases the server accepted
  earlier in the run (a tool that accepted none stays out of the chains, so a refusal in a chain is
  never about arguments the tool refuses anyway);
* per tool and identifier-like input slot (``record_id``, ``booking_ref``, ``path``...), a **chained
  rule** takes a token from the bundle that fits that slot and calls the tool with it.

Destructive tools take part only when allowed. After each step the chain checks run (kind ``chain``,
:mod:`feeler.world.invariants`): an identifier an earlier call returned must be accepted
(``read_your_writes``), and a tool annotated ``idempotentHint`` is called a second time with the same
arguments and must give the same outcome (``idempotent_repeat``). A failing step fails the machine, so
hypothesis shrinks the sequence to the shortest one that still fails; that sequence becomes the
finding's replay (:func:`replay_sequence` runs it again, taking each linked value from the new answers).

The server keeps its state from one example of the machine to the next (and from the single-call pass
before), so a sequence may fail only because of records it did not make (an id a listing showed that
an earlier example left behind). Each example therefore knows which values it made itself: those new
in the answer of a write (a tool not annotated ``readOnlyHint``) that were not among the call's own
arguments. A failure whose value from an earlier answer is one the example made is *self-contained*:
it shrinks and replays the same way on any server state (a fresh server included). The others do not stop the example (hypothesis would spend its search shrinking sequences that
depend on where the server happened to be); they are kept, cut down to the steps the failing one takes
its values from and confirmed on the live server (:func:`_cut`), and reported only when no
self-contained failure shows the same problem.
"""

from __future__ import annotations

import json
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from feeler._signals import held
from feeler.catalog import Tool
from feeler.check.registry import CHECKS, CallContext, Check, Problem
from feeler.check.runner import note_duration
from feeler.errors import RemoteProtocolError, RequestTimeout, ServerExited, TargetError
from feeler.session import Session
from feeler.world.apply import put_at, slots
from feeler.world.invariants import ChainCase, outcome
from feeler.world.learn import answer_values, value_at
from feeler.world.names import PATH_WORDS, identifier_like, nouns, related, words

if TYPE_CHECKING:
    from feeler.check.runner import Runner

__all__ = ["ChainFailure", "SequenceReplay", "Step", "Token", "replay_sequence", "run_chains"]


@dataclass(frozen=True)
class Token:
    """A value from an answer: made at step ``step``, found at ``place``/``inner`` of that answer."""

    value: Any
    step: int
    tool: str
    place: str
    inner: str | None
    fits: frozenset[tuple[str, str]]  # (tool, instanceLocation) slots it may fill
    own: bool = False  # the chain made this value (see the module docstring), not the server's earlier state

    def describe(self) -> str:
        where = self.place + (f" {self.inner}" if self.inner else "")
        return f"{self.tool} {where} at step {self.step + 1}"

    def __repr__(self) -> str:  # hypothesis prints the shrunk sequence with it
        return f"Token({self.value!r} from {self.describe()})"


@dataclass
class Step:
    """One call of a sequence, as the replay file holds it."""

    tool: str
    arguments: Any
    links: dict[str, dict[str, Any]] = field(default_factory=dict)  # instanceLocation -> {step, place, inner}
    outcome: str = ""
    repeat: bool = False

    def to_json(self) -> dict[str, Any]:
        return {"tool": self.tool, "arguments": self.arguments, "links": self.links, "outcome": self.outcome,
                "repeat": self.repeat}  # fmt: skip


@dataclass
class ChainFailure:
    """The shortest failing sequence hypothesis found for one problem, and the context of its last step.

    :param contained: the value the failing step took from an earlier answer was made by the sequence
        itself, so the sequence shows the problem on any server state (a fresh server included).
    """

    check: str
    problem: Problem
    steps: list[Step]
    ctx: CallContext
    contained: bool = True


_NON_WORD = re.compile(r"\W")


class _ChainFailed(Exception):
    pass


_failure_types: dict[str, type[_ChainFailed]] = {}


def _failure_type(name: str) -> type[_ChainFailed]:
    # one exception type per check and tool, so hypothesis shrinks each distinct failure on its own
    if name not in _failure_types:
        _failure_types[name] = type("ChainFailed_" + _NON_WORD.sub("_", name), (_ChainFailed,), {})
    return _failure_types[name]


@dataclass(frozen=True)
class _Slot:
    tool: str
    pointer: str
    name: str


def _call(runner: Runner, tool: Tool, arguments: Any) -> CallContext:
    ctx = CallContext("chain", tool, runner.revision, runner.era, runner.settings)
    try:
        ctx.exchange = runner.open().call_tool(tool.name, arguments)
    except RemoteProtocolError as exc:
        if exc.exchange is not None:
            ctx.exchange = exc.exchange
        else:
            ctx.failure = exc
    except (RequestTimeout, ServerExited, TargetError) as exc:
        ctx.failure = exc
    if isinstance(ctx.failure, ServerExited):
        runner._restart()
    with held():  # counted and logged together (a stop signal waits)
        stats = runner.stats(tool)
        stats.chain_calls += 1
        if ctx.exchange is not None and ctx.exchange.finished is not None:
            note_duration(stats, ctx.exchange.duration, "chain")
        if runner.on_call is not None:  # the call log (and a campaign's budget) see chain calls too
            runner.on_call(tool, _ChainCall(arguments), ctx, [])
    return ctx


@dataclass(frozen=True)
class _ChainCall:
    """What the runner's call hook reads of a case, for one step of a chain."""

    arguments: Any
    kind: str = "chain"
    source: str = "chain"


def _run_checks(checks: list[Check], ctx: CallContext) -> list[tuple[str, Problem]]:
    return [(check.name, problem) for check in checks for problem in check.run(ctx) if problem.severity == "error"]


class _Plan:
    """What the machine is built from: the chain's tools, their base arguments and their slots."""

    def __init__(self, runner: Runner, tools: list[Tool], bases: dict[str, list[Any]]) -> None:

        self.runner = runner
        self.tools = {t.name: t for t in tools}
        self.bases = bases
        self.schemas = {t.name: runner.schema(t) for t in tools}
        self.nouns = {t.name: nouns(t.name) for t in tools}
        self.slots: list[_Slot] = []
        for tool in tools:
            for slot in slots(self.schemas[tool.name], bases[tool.name][0]):
                if identifier_like(slot.name) and not slot.pointer.count("/") > 2:
                    self.slots.append(_Slot(tool.name, slot.pointer, slot.name))
        self.checks = [c for c in runner.checks if "chain" in c.applies_to]

    def fits(self, found: Any) -> frozenset[tuple[str, str]]:
        out = set()
        for slot in self.slots:
            if found.kind is not None:
                ok = found.kind == ("path" if words(slot.name)[-1] in PATH_WORDS else "id")
            else:
                ok = related(slot.name, found.name or "", found.context, self.nouns[slot.tool])
            if ok and self.schemas[slot.tool].is_valid(_put(self.bases[slot.tool][0], slot.pointer, found.value)):
                out.add((slot.tool, slot.pointer))
        return frozenset(out)


def _put(arguments: Any, pointer: str, value: Any) -> Any:
    try:
        return put_at(arguments, pointer, value)
    except (KeyError, TypeError):
        return arguments


def _machine(plan: _Plan, failures: dict[str, ChainFailure]) -> type:
    from hypothesis import strategies as st
    from hypothesis.stateful import Bundle, RuleBasedStateMachine, multiple, precondition, rule

    learned: Any = Bundle("learned")

    def step(self: Any, tool_name: str, base: int, token: Token | None, slot: _Slot | None) -> Any:
        tool = plan.tools[tool_name]
        arguments = plan.bases[tool_name][base]
        links: dict[str, dict[str, Any]] = {}
        case = ChainCase(arguments)
        if token is not None and slot is not None:
            arguments = _put(arguments, slot.pointer, token.value)
            if not plan.schemas[tool_name].is_valid(arguments) or token.value in self.dead:
                return multiple()
            links[slot.pointer] = {"step": token.step, "place": token.place, "inner": token.inner}
            case = ChainCase(arguments, slot.pointer, identifier_like(slot.name), token.describe())
        # Self-contained: the value taken from an earlier answer is one this example made (see the module
        # docstring); a base argument's own values were sent by feeler before and count as given.
        contained = token is None or (_hashable(token.value) and token.value in self.made)
        ctx = _call(plan.runner, tool, arguments)
        ctx.case = case
        record = Step(tool_name, arguments, links, outcome(ctx))
        self.steps.append(record)
        problems = _run_checks(plan.checks, ctx)
        if not problems and tool.annotations.get("idempotentHint") is True:
            again = _call(plan.runner, tool, arguments)
            again.case = ChainCase(arguments, case.path, case.judged, case.origin, first=record.outcome)
            record.repeat = True
            problems = _run_checks(plan.checks, again)
            ctx = again if problems else ctx
        if problems:
            name, problem = problems[0]
            key = f"{name}|{tool_name}|{problem.error_class}|{'own' if contained else 'world'}"
            failure = ChainFailure(name, problem, [Step(**vars(s)) for s in self.steps], ctx, contained)
            if key not in failures or _size(failure.steps) <= _size(failures[key].steps):
                failures[key] = failure  # the shortest seen: a shrink on a live server may end on a longer one
            if contained:
                raise _failure_type(key)(f"[{name}] {tool_name}: {problem.message}")
            # Leaning on the server's earlier state: kept (and cut down after the run, see _cut), but the
            # example goes on, so the search for a self-contained sequence is not cut short by it.
            return multiple()
        if tool.destructive:
            self.dead.update(v for v in _scalars(arguments))
        if record.outcome != "entered" or ctx.exchange is None:
            return multiple()
        index = len(self.steps) - 1
        makes = tool.annotations.get("readOnlyHint") is not True  # a write mints values; a read only shows them
        sent = set(_scalars(arguments))
        tokens = []
        for found in answer_values(tool_name, ctx.exchange.result, max_values=100):
            if makes and _hashable(found.value) and found.value not in sent:
                self.made.add(found.value)  # new in this answer: minted by this call
            fits = plan.fits(found)
            if fits:
                own = _hashable(found.value) and found.value in self.made
                tokens.append(Token(found.value, index, tool_name, found.place, found.inner, fits, own))
        self.tokens.extend(tokens[:20])
        return multiple(*tokens[:20])

    namespace: dict[str, Any] = {"learned": learned}

    def init(self: Any) -> None:
        RuleBasedStateMachine.__init__(self)
        self.steps = []
        self.dead = set()
        self.made = set()  # identifiers this example of the machine made itself (see the module docstring)
        self.tokens = []  # the bundle's values, for the preconditions

    namespace["__init__"] = init
    for name in plan.tools:
        count = len(plan.bases[name])
        own_slots = frozenset((name, s.pointer) for s in plan.slots if s.tool == name)

        def plain(self: Any, base: int, _name: str = name) -> Any:
            return step(self, _name, base, None, None)

        def untied(self: Any, _own: frozenset[tuple[str, str]] = own_slots) -> bool:
            # A tool that takes an identifier is called with its base arguments only while no value of
            # the chain fits it: the base's identifier is one of the server's earlier state, the chain's
            # own are what read-your-writes is about.
            return not any(_own & t.fits for t in self.tokens)

        namespace[f"call_{name}"] = precondition(untied)(rule(target=learned, base=st.integers(0, count - 1))(plain))
    for slot in plan.slots:
        count = len(plan.bases[slot.tool])
        wanted = (slot.tool, slot.pointer)

        def chained(self: Any, token: Token, base: int, _slot: _Slot = slot) -> Any:
            return step(self, _slot.tool, base, token, _slot)

        def has(self: Any, _wanted: tuple[str, str] = wanted) -> bool:
            return any(_wanted in t.fits for t in self.tokens)

        token_strategy = learned.filter(lambda t, _wanted=wanted: _wanted in t.fits)
        decorated = rule(target=learned, token=token_strategy, base=st.integers(0, count - 1))(chained)
        namespace[f"chain_{slot.tool}" + _NON_WORD.sub("_", slot.pointer)] = precondition(has)(decorated)
    # hypothesis keys a state machine by a digest of its source (inspect.getsource), which for a class made
    # here means parsing this whole module on every chain phase only to find no class statement: a module
    # name with no file makes it fall back to the class name at once, the digest it reached before.
    namespace["__module__"] = "feeler.world.chains.<machine>"
    return type("FeelerChains", (RuleBasedStateMachine,), namespace)


def _hashable(value: Any) -> bool:
    return isinstance(value, (str, int, float)) and not isinstance(value, bool)


def _size(steps: list[Step]) -> tuple[int, int]:
    """A sequence's size for keeping the shortest failure: steps first, then the arguments' length."""
    return len(steps), sum(len(json.dumps(s.arguments, default=str)) for s in steps)


def _scalars(value: Any) -> list[Any]:
    if isinstance(value, dict):
        return [s for v in value.values() for s in _scalars(v)]
    if isinstance(value, list):
        return [s for v in value for s in _scalars(v)]
    return [value] if isinstance(value, (str, int)) and not isinstance(value, bool) else []


#: the built-in chain checks: they need a linked slot (read_your_writes) or an idempotent tool
_LINK_CHECKS = frozenset({"read_your_writes", "idempotent_repeat"})


def run_chains(
    runner: Runner, tools: list[Tool], bases: dict[str, list[Any]], *, runs: int, steps: int, shrink: bool = True
) -> list[ChainFailure]:
    """Run chains over *tools* (each with at least one base argument in *bases*); return the failures,
    each with the shortest sequence hypothesis found."""
    from hypothesis import HealthCheck, Phase, Verbosity, settings
    from hypothesis.errors import Flaky
    from hypothesis.stateful import run_state_machine_as_test

    tools = [t for t in tools if bases.get(t.name)]
    if not tools or runs <= 0:
        return []
    plan = _Plan(runner, tools, bases)
    if not plan.checks:
        return []
    if not plan.slots and {c.name for c in plan.checks} <= _LINK_CHECKS and not any(
        t.annotations.get("idempotentHint") is True for t in tools
    ):
        return []  # no input takes a returned identifier and no tool is idempotent: no chain check can fail
    failures: dict[str, ChainFailure] = {}
    machine = _machine(plan, failures)
    phases = [Phase.generate, Phase.shrink] if shrink else [Phase.generate]
    config = settings(max_examples=runs, stateful_step_count=steps, deadline=None, database=None, derandomize=True,
                      phases=phases, suppress_health_check=list(HealthCheck), verbosity=Verbosity.quiet,
                      report_multiple_bugs=True)  # fmt: skip
    try:
        run_state_machine_as_test(machine, settings=config)
    except (_ChainFailed, Flaky):
        pass
    except BaseException as exc:  # an exception group of several distinct failures
        inner = getattr(exc, "exceptions", None)
        if not inner or not all(isinstance(e, (_ChainFailed, Flaky)) for e in inner):
            raise
    # One failure per problem: the self-contained sequence when there is one, else the one that needs the
    # server's earlier state, cut down to what its last step depends on.
    chosen: dict[str, ChainFailure] = {}
    for key, failure in sorted(failures.items(), key=lambda kv: kv[0].endswith("|world")):
        problem = key.rsplit("|", 1)[0]
        if problem not in chosen:
            chosen[problem] = failure if failure.contained else _cut(plan, failure)
    return list(chosen.values())


def _cut(plan: _Plan, failure: ChainFailure) -> ChainFailure:
    """*failure* with only the steps its last step takes values from (directly or through other steps),
    if that shorter sequence shows the same problem again on the live server; else *failure* as it was."""
    steps = failure.steps
    keep = {len(steps) - 1}
    for index in range(len(steps) - 1, -1, -1):
        if index in keep:
            keep.update(link["step"] for link in steps[index].links.values())
    if len(keep) == len(steps):
        return failure
    order = sorted(keep)
    renumber = {old: new for new, old in enumerate(order)}
    cut = [Step(steps[i].tool, steps[i].arguments, {p: {**link, "step": renumber[link["step"]]} for p, link in
                steps[i].links.items()}, steps[i].outcome, steps[i].repeat) for i in order]  # fmt: skip
    runner = plan.runner

    def make_ctx(tool: Tool | None) -> CallContext:
        return CallContext("chain", tool, runner.revision, runner.era, runner.settings)

    data = {"sequence": [s.to_json() for s in cut], "finding": {"check": failure.check}}
    try:
        seen = replay_sequence(runner.open(), data, make_ctx, _Tools(plan.tools), None)
    except TargetError:
        return failure
    again = [p for p in seen.problems if p.error_class == failure.problem.error_class]
    if seen.lost is not None or not again:
        return failure
    return ChainFailure(failure.check, failure.problem, cut, failure.ctx, contained=False)


class _Tools:
    """The ``catalog.tool(name)`` lookup :func:`replay_sequence` needs, over the chain's tools."""

    def __init__(self, tools: dict[str, Tool]) -> None:
        self._tools = tools

    def tool(self, name: str) -> Tool:
        return self._tools[name]


# -- replay ---------------------------------------------------------------------------------------


@dataclass
class SequenceReplay:
    """What :func:`replay_sequence` saw: the last request and answer, the finding's check's problems on the
    last step, and why the sequence could not be followed (``lost``), if it could not."""

    request: str
    answer: str | None
    problems: list[Problem]
    lost: str | None = None


def replay_sequence(session: Session, data: dict[str, Any], make_ctx: Callable[[Tool | None], CallContext], catalog: Any,
                    timeout: float | None) -> SequenceReplay:  # fmt: skip
    """Run a recorded sequence again on *session*, taking each linked value from the new answers; run the
    finding's check on the last step.

    A linked value that the new answer does not hold (the server's state differs from the recorded run)
    stops the replay: the recorded value would be an identifier of the old run, and its refusal would
    prove nothing. ``lost`` then says which step and place.
    """
    sequence = data["sequence"]
    finding = data["finding"]
    check = CHECKS.get(finding.get("check", ""))
    results: list[Any] = []
    request, answer, problems = "", None, []
    for index, raw in enumerate(sequence):
        arguments = raw["arguments"]
        origin = ""
        for pointer, link in (raw.get("links") or {}).items():
            earlier = results[link["step"]] if link["step"] < len(results) else None
            found, value = value_at(earlier, link["place"], link.get("inner"))
            source = f"{sequence[link['step']]['tool']} {link['place']} at step {link['step'] + 1}"
            if not found:
                where = source + (f" {link['inner']}" if link.get("inner") else "")
                return SequenceReplay(request, answer, [], f"step {index + 1} ({raw['tool']}) takes {pointer} from "
                                      f"{where}, and the new answer has nothing there: the server's state differs "
                                      "from the recorded run (start it as it was then)")  # fmt: skip
            arguments = _put(arguments, pointer, value)
            origin = source
        try:
            tool = catalog.tool(raw["tool"])
        except KeyError:
            tool = Tool({"name": raw["tool"]})
        last = index == len(sequence) - 1
        ctx = make_ctx(tool)
        try:
            ctx.exchange = session.call_tool(raw["tool"], arguments, timeout=timeout)
        except TargetError as exc:
            ctx.failure = exc
        results.append(ctx.exchange.result if ctx.exchange is not None else None)
        pointer = next(iter(raw.get("links") or {}), "")
        ctx.case = ChainCase(arguments, pointer, bool(pointer) and identifier_like(pointer.rsplit("/", 1)[-1]), origin)
        if raw.get("repeat") and last:
            first = outcome(ctx)
            ctx = make_ctx(tool)
            try:
                ctx.exchange = session.call_tool(raw["tool"], arguments, timeout=timeout)
            except TargetError as exc:
                ctx.failure = exc
            ctx.case = ChainCase(arguments, pointer, False, origin, first=first)
        if last:
            request = ctx.exchange.request_text if ctx.exchange is not None else json.dumps(arguments)
            frames = [f.text for f in ctx.exchange.frames if f.direction == "in"] if ctx.exchange is not None else []
            answer = frames[-1] if frames else None
            problems = list(check.run(ctx)) if check is not None else []
    return SequenceReplay(request, answer, problems)

