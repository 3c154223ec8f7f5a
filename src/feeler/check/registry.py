"""The check registry: every check is one small generator function, registered in :data:`CHECKS`.

A check looks at one :class:`CallContext` (a tool call, a probe, or a liveness ping) and yields
:class:`Problem` objects that carry only a message. The runner fills in the rest (tool, case, keyword,
path, replay file), as ``jsonschema.iter_errors`` fills in paths for its keyword functions.

Users add checks with :func:`register`::

    from feeler.check import Problem, register

    @register("answers_in_english", applies_to=("go",), severity="warning")
    def answers_in_english(ctx):
        \"\"\"Text content is English (our servers' house rule).\"\"\"
        ...
        yield Problem("the answer is not in English")
"""

from __future__ import annotations

import inspect

from collections.abc import Callable, Iterator
from dataclasses import dataclass, field, replace
from typing import Any

from feeler.catalog import Tool
from feeler.errors import TargetError, UsageError
from feeler.session import Exchange

__all__ = ["CHECKS", "CASE_KINDS", "SEVERITIES", "CallContext", "Check", "CheckSettings", "Problem", "register", "select_checks"]

#: What a check can look at: the advertised tool itself, a go case, a no-go case, a protocol probe,
#: the liveness ping after a case, the whole tool after all its cases, or one step of a call chain.
CASE_KINDS = ("catalog", "go", "no-go", "probe", "alive", "tool", "chain")
SEVERITIES = ("error", "warning")


@dataclass(frozen=True)
class Problem:
    """What a check found. *error_class* groups problems into one finding signature."""

    message: str
    severity: str | None = None
    error_class: str = ""
    #: for a catalog-wide problem, the tools it concerns (the finding lists them)
    tools: tuple[str, ...] = ()


@dataclass(frozen=True)
class CheckSettings:
    """How strict the checks are.

    :param strict_go: ``isError: true`` on a go case is a finding (otherwise it is counted and reported).
    :param latency_budget: seconds per call, by tool name; ``"*"`` is the default for every tool.
    :param secrets: strings that must never appear in an answer (values of secret-looking env vars).
    :param given_paths: absolute paths the user gave the target (command line, working folder): an
        error that shows one of them (or a path under it) leaks nothing the user did not know.
    :param max_tools: a catalog with more tools than this is a warning (a model chooses worse).
    :param max_catalog_tokens: the same for the catalog's estimated size in tokens.
    :param allowed_hosts: hosts a description may link to without a ``poisoned_text`` warning.
    """

    strict_go: bool = False
    latency_budget: dict[str, float] = field(default_factory=dict)
    secrets: tuple[str, ...] = ()
    given_paths: tuple[str, ...] = ()
    max_tools: int = 40
    max_catalog_tokens: int = 10_000
    allowed_hosts: tuple[str, ...] = ()

    def budget_for(self, tool: str) -> float | None:
        return self.latency_budget.get(tool, self.latency_budget.get("*"))


@dataclass
class CallContext:
    """Everything a check may look at for one call.

    :param kind: one of :data:`CASE_KINDS`.
    :param case: the generated case (go / no-go), a probe, or None.
    :param failure: the target failure instead of an answer (timeout, exit), if any.
    :param stats: per-tool counters (for ``tool`` checks).
    :param base: the outcome (``entered``, ``stopped``, ``broke``) of the case's base, the same arguments
        with the exercised keyword intact (:mod:`feeler.world.anchor`); None when no base is known.
    """

    kind: str
    tool: Tool | None
    revision: str
    era: str
    settings: CheckSettings
    exchange: Exchange | None = None
    case: Any = None
    failure: TargetError | None = None
    stats: Any = None
    #: the whole catalog, for catalog-wide checks (``kind == "catalog"`` and ``tool is None``)
    catalog: Any = None
    base: str | None = None
    #: the base's arguments (what entered), kept in the replay file of an anchored finding
    base_arguments: Any = None

    @property
    def keyword(self) -> str | None:
        return getattr(self.case, "keyword", None)

    @property
    def path(self) -> str | None:
        return getattr(self.case, "path", None)


CheckFunc = Callable[[CallContext], Iterator[Problem]]


@dataclass(frozen=True)
class Check:
    name: str
    func: CheckFunc
    applies_to: tuple[str, ...]
    severity: str
    doc: str
    reference: str
    #: a cheap necessary condition for the check to find anything (None: always run it); see register()
    when: Callable[[CallContext], bool] | None = None

    def run(self, ctx: CallContext) -> list[Problem]:
        if ctx.kind not in self.applies_to or (self.when is not None and not self.when(ctx)):
            return []
        return self.problems(ctx)

    def problems(self, ctx: CallContext) -> list[Problem]:
        """What the check finds in *ctx*, each with a severity (no test of the kind nor of ``when``: for a
        caller that made them, as the runner does)."""
        return [p if p.severity else replace(p, severity=self.severity) for p in self.func(ctx)]


CHECKS: dict[str, Check] = {}


def _summary(doc: str) -> str:
    """The first paragraph of a docstring on one line (what ``--list-checks`` and reports show)."""
    return " ".join(inspect.cleandoc(doc).split("\n\n", 1)[0].split())


def register(
    name: str, *, applies_to: tuple[str, ...], severity: str = "error", reference: str = "",
    when: Callable[[CallContext], bool] | None = None,
) -> Callable[[CheckFunc], CheckFunc]:
    """Register a check under *name*; checked when registered (kinds, severity, docstring).

    :param when: optional, a cheap test that is true whenever the check could find something (its own
        first guard, e.g. "the answer is an error"): the runner skips the check on calls where it is
        false, which keeps the many checks of each call cheap on the common, clean answer. It must never
        be false where the check would yield a problem.
    """

    def decorate(func: CheckFunc) -> CheckFunc:
        unknown = set(applies_to) - set(CASE_KINDS)
        if unknown:
            raise UsageError(f"check {name!r}: applies_to has unknown kinds {sorted(unknown)}; use {CASE_KINDS}")
        if severity not in SEVERITIES:
            raise UsageError(f"check {name!r}: severity={severity!r} must be one of {SEVERITIES}")
        if not (func.__doc__ or "").strip():
            raise UsageError(f"check {name!r}: give it a docstring; `feeler check --list-checks` shows it")
        if name in CHECKS and CHECKS[name].func is not func:
            raise UsageError(f"check {name!r} is registered twice")
        CHECKS[name] = Check(name, func, tuple(applies_to), severity, _summary(func.__doc__ or ""), reference, when)
        return func

    return decorate


#: Former check names, accepted for one release with a notice.
RENAMED_CHECKS: dict[str, str] = {"go_accepted": "go_enters", "nogo_rejected": "nogo_stops", "accepts_some_go": "gate_opens"}


def current_name(name: str) -> str:
    """*name*, or its new name if it is a former check name (with a one-line notice)."""
    if name in RENAMED_CHECKS and name not in CHECKS:
        from feeler._deprecated import notice

        notice(f"the check name {name!r}", repr(RENAMED_CHECKS[name]))
        return RENAMED_CHECKS[name]
    return name


def select_checks(names: list[str] | None = None, skip: list[str] | None = None) -> list[Check]:
    """The checks to run: all by default, or *names*; minus *skip*. Unknown names are a usage error."""
    from difflib import get_close_matches

    names = [current_name(n) for n in names] if names else names
    skip = [current_name(n) for n in skip] if skip else skip
    for name in [*(names or []), *(skip or [])]:
        if name not in CHECKS:
            close = get_close_matches(name, list(CHECKS), n=1)
            hint = f"; did you mean {close[0]!r}?" if close else f"; known checks: {', '.join(sorted(CHECKS))}"
            raise UsageError(f"unknown check {name!r}{hint}")
    chosen = [CHECKS[n] for n in names] if names else list(CHECKS.values())
    return [c for c in chosen if c.name not in set(skip or [])]
