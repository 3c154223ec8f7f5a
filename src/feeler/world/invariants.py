"""The built-in invariants of call chains (kind ``chain``): they need no user code.

* ``read_your_writes``: an identifier a tool just returned is accepted by the tools that take it.
* ``idempotent_repeat``: a call annotated ``idempotentHint: true`` gives the same outcome twice in a row
  (MCP 2025-03-26 onward, ToolAnnotations: "calling the tool repeatedly with the same arguments will
  have no additional effect").

Both read a :class:`ChainCase`, set by :mod:`feeler.world.chains` on each step of a sequence.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

from feeler.check.registry import CallContext, Problem, register
from feeler.world.anchor import outcome as _outcome
from feeler.world.anchor import refusal_text

__all__ = ["ChainCase", "outcome"]


@dataclass
class ChainCase:
    """One step of a chain, as the chain checks see it.

    :param arguments: the arguments sent.
    :param path: where the value from an earlier answer went (``instanceLocation``), or ``""``.
    :param judged: that value is an identifier an earlier call returned (``read_your_writes`` applies).
    :param origin: a human description of where the value came from (``"create_record /structuredContent/id
        at step 1"``).
    :param first: for the repeat of an idempotent call, the first call's outcome; else ``None``.
    """

    arguments: Any
    path: str = ""
    judged: bool = False
    origin: str = ""
    first: str | None = None
    kind: str = "chain"
    keyword: str | None = None
    note: str = ""


def outcome(ctx: CallContext) -> str:
    """The call's outcome (:func:`feeler.world.anchor.outcome`): ``entered``, ``stopped`` or ``broke``."""
    return _outcome(ctx.exchange, ctx.failure) or "broke"


def _said(ctx: CallContext) -> str:
    if ctx.failure is not None:
        return str(ctx.failure)
    return repr(refusal_text(ctx.exchange)[:120]) if ctx.exchange is not None else "no answer"


@register("read_your_writes", applies_to=("chain",), reference="common practice (read-your-writes consistency)")
def read_your_writes(ctx: CallContext) -> Iterator[Problem]:
    """An identifier a tool just returned is accepted by the tools that take it."""
    case = ctx.case
    if not isinstance(case, ChainCase) or not case.judged or case.first is not None:
        return
    got = outcome(ctx)
    if got != "entered":
        yield Problem(f"{got}: {_said(ctx)} for {case.path} from {case.origin}", error_class=f"own-identifier-{got}")


@register("idempotent_repeat", applies_to=("chain",),
          reference="MCP 2025-03-26 onward, ToolAnnotations idempotentHint")  # fmt: skip
def idempotent_repeat(ctx: CallContext) -> Iterator[Problem]:
    """A call annotated idempotentHint gives the same outcome when repeated with the same arguments."""
    case = ctx.case
    if not isinstance(case, ChainCase) or case.first is None:
        return
    got = outcome(ctx)
    if got != case.first:
        yield Problem(f"the same call {case.first} first, then {got}: {_said(ctx)}", error_class=f"{case.first}-then-{got}")
