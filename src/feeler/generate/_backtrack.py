"""Which regular expressions take exponential time in a backtracking engine: a shape check on the parse tree.

A backtracking engine (Python's :mod:`re`, the ``regex`` package, ECMA-262's own semantics) tries every way
a near miss can be split among the parts of a pattern before it says "no match". When a repeat's rounds can
split the same text in more than one way, those ways multiply with every round: ``^(a|a)*$`` tries 2**40
splits of forty ``a`` and a ``!``. :func:`slow_shape` names the common shapes that do this (common practice: the
shapes OWASP's page on regular expression denial of service lists, from memory):

- a repeat whose body is an open-ended repeat plus parts that may match nothing (``(a+)+``, ``(\\w+\\s?)*``);
- a repeat of many rounds over alternatives that can match the same text (``(a|a)*``, ``(\\w|\\d)+``);
- a repeat of many rounds whose body can be split in more than one way: the end of one round may start the
  next (``(a{1,30}){1,30}``, ``(\\d|1\\d)+``), or a part of variable length may take what the part after
  it needs (``(.*a){20}``).

It reads Python's parse tree (``re._parser``) of the translated pattern, with character sets kept coarse;
it is a guess that errs little both ways, and the guarantee is the time budget of every match
(:func:`feeler.generate._ecma.search`).
"""

from __future__ import annotations

import math
from typing import Any

try:  # Python 3.11+
    import re._constants as _c
except ImportError:  # pragma: no cover - Python 3.10
    import sre_constants as _c  # type: ignore[no-redef]

__all__ = ["slow_shape"]

_REPEATS = (_c.MAX_REPEAT, _c.MIN_REPEAT) + ((_c.POSSESSIVE_REPEAT,) if hasattr(_c, "POSSESSIVE_REPEAT") else ())


def _nullable(op: object, av: object) -> bool:
    if op is _c.AT:
        return True
    if op in _REPEATS:
        return av[0] == 0 or all(_nullable(o, a) for o, a in av[2])  # type: ignore[index]
    if op is _c.SUBPATTERN:
        return all(_nullable(o, a) for o, a in av[-1])  # type: ignore[index]
    if op is _c.BRANCH:
        return any(all(_nullable(o, a) for o, a in branch) for branch in av[1])  # type: ignore[index]
    return op in (_c.ASSERT, _c.ASSERT_NOT)


def _unbounded_inside(tokens: list) -> bool:
    """Does *tokens* hold an open-ended repeat with every other item able to match nothing?"""
    for i, (op, av) in enumerate(tokens):
        if op in _REPEATS and av[1] == _c.MAXREPEAT:
            if all(_nullable(o, a) for j, (o, a) in enumerate(tokens) if j != i):
                return True
            # Two open-ended repeats of the same thing with only optional parts between (x+x+): ambiguous too.
            for j in range(i + 1, len(tokens)):
                o2, a2 = tokens[j]
                if o2 in _REPEATS and a2[1] == _c.MAXREPEAT and list(a2[2]) == list(av[2]):
                    return True
                if not _nullable(o2, a2):
                    break
        if op in (_c.SUBPATTERN, _c.BRANCH) and all(_nullable(o, a) for j, (o, a) in enumerate(tokens) if j != i):
            # a group alone in the body (x(a+|b))+ is delimited by x, ((a+|b))+ is not)
            if op is _c.SUBPATTERN and _unbounded_inside(list(av[-1])):
                return True
            if op is _c.BRANCH and any(_unbounded_inside(list(b)) for b in av[1]):
                return True
    return False


# Character sets, coarsely: (negated, ranges); (True, ()) is every character, (False, ()) none.
_ALL = (True, ())
_NONE = (False, ())
_SINGLE = (_c.LITERAL, _c.NOT_LITERAL, _c.ANY, _c.IN)
#: A repeat that may run this many rounds (with the repeats around it) can split a near miss in
#: exponentially many ways when its part is ambiguous; fewer rounds keep the ways few.
_MANY = 10


def _one_char(op: object, av: Any) -> tuple[bool, tuple]:
    """The characters one single-character item matches."""
    if op is _c.LITERAL:
        return False, ((av, av),)
    if op is _c.NOT_LITERAL:
        return True, ((av, av),)
    if op is _c.IN:
        negated = bool(av) and av[0][0] is _c.NEGATE
        ranges = []
        for o, a in av[1:] if negated else av:
            if o is _c.LITERAL:
                ranges.append((a, a))
            elif o is _c.RANGE:
                ranges.append(a)
            else:
                return _ALL  # a category: taken as every character (a conservative guess)
        return negated, tuple(ranges)
    return _ALL  # ANY


def _join(a: tuple[bool, tuple], b: tuple[bool, tuple]) -> tuple[bool, tuple]:
    if a == _NONE:
        return b
    if b == _NONE or a == _ALL:
        return a
    return (False, a[1] + b[1]) if not a[0] and not b[0] else _ALL


def _meet(a: tuple[bool, tuple], b: tuple[bool, tuple]) -> bool:
    """Do the two sets share a character?"""
    if a[0] and b[0]:
        return True  # two complements of a few ranges each
    if a[0] or b[0]:
        excluded, kept = (a[1], b[1]) if a[0] else (b[1], a[1])
        merged: list[list[int]] = []
        for lo, hi in sorted(excluded):
            if merged and lo <= merged[-1][1] + 1:
                merged[-1][1] = max(merged[-1][1], hi)
            else:
                merged.append([lo, hi])
        # A kept range outside the complement's ranges has a character in the complement.
        return any(not any(lo <= low and high <= hi for lo, hi in merged) for low, high in kept)
    return any(lo <= h2 and lo2 <= hi for lo, hi in a[1] for lo2, h2 in b[1])


def _span(op: object, av: Any) -> tuple[int, float]:
    """The fewest and most characters one item matches."""
    if op in _SINGLE:
        return 1, 1
    if op in _REPEATS:
        low, high = _seq_span(av[2])
        return av[0] * low, (math.inf if av[1] == _c.MAXREPEAT else av[1]) * high
    if op is _c.SUBPATTERN:
        return _seq_span(av[-1])
    if op is _c.BRANCH:
        spans = [_seq_span(b) for b in av[1]]
        return min(s[0] for s in spans), max(s[1] for s in spans)
    if op in (_c.AT, _c.ASSERT, _c.ASSERT_NOT):
        return 0, 0
    return 0, math.inf  # a back reference, a conditional group


def _seq_span(tokens: Any) -> tuple[int, float]:
    spans = [_span(o, a) for o, a in tokens]
    return sum(s[0] for s in spans), sum(s[1] for s in spans)


def _chars(op: object, av: Any) -> tuple[bool, tuple]:
    """Every character one item may match."""
    if op in _SINGLE:
        return _one_char(op, av)
    if op in _REPEATS:
        return _seq_chars(av[2])
    if op is _c.SUBPATTERN:
        return _seq_chars(av[-1])
    if op is _c.BRANCH:
        out = _NONE
        for branch in av[1]:
            out = _join(out, _seq_chars(branch))
        return out
    return _NONE if op in (_c.AT, _c.ASSERT, _c.ASSERT_NOT) else _ALL


def _seq_chars(tokens: Any) -> tuple[bool, tuple]:
    out = _NONE
    for o, a in tokens:
        out = _join(out, _chars(o, a))
    return out


def _first(tokens: Any) -> tuple[bool, tuple]:
    """The characters a match of *tokens* may start with."""
    out = _NONE
    for op, av in tokens:
        if op in _SINGLE:
            part = _one_char(op, av)
        elif op in _REPEATS:
            part = _first(av[2])
        elif op is _c.SUBPATTERN:
            part = _first(av[-1])
        elif op is _c.BRANCH:
            part = _NONE
            for branch in av[1]:
                part = _join(part, _first(branch))
        else:
            part = _chars(op, av)
        out = _join(out, part)
        if _span(op, av)[0] > 0:
            break
    return out


def _tail(tokens: Any) -> tuple[bool, tuple]:
    """The characters the parts of variable length at the end of *tokens* may take: what one round of a
    repeat may hand to the next."""
    out = _NONE
    for op, av in reversed(list(tokens)):
        low, high = _span(op, av)
        if low != high:
            if op in _REPEATS:
                out = _join(out, _seq_chars(av[2]) if av[0] != av[1] else _tail(av[2]))
            elif op is _c.SUBPATTERN:
                out = _join(out, _tail(av[-1]))
            elif op is _c.BRANCH:
                shortest = int(min(_seq_span(b)[0] for b in av[1]))
                for branch in av[1]:
                    # what a longer alternative matches past the shortest one's length may start the next round
                    extra = _seq_chars(branch[shortest:]) if _seq_span(branch)[0] > shortest else _NONE
                    out = _join(out, _join(_tail(branch), extra))
            else:
                out = _ALL
        if low > 0:
            break
    return out


def _positions(tokens: Any) -> list[tuple[bool, tuple]] | None:
    """The character set at each position of a fixed run of single characters, else None."""
    out: list[tuple[bool, tuple]] = []
    for op, av in tokens:
        if op in _SINGLE:
            out.append(_one_char(op, av))
        elif op is _c.SUBPATTERN and (inner := _positions(av[-1])) is not None:
            out.extend(inner)
        elif op in (_c.AT, _c.ASSERT, _c.ASSERT_NOT):
            continue
        else:
            return None
    return out


def _same_text(branch: Any) -> bool:
    """Can two alternatives of *branch* (reached through groups) match the same text? Judged for runs of
    single characters of equal length (``a|a``, ``\\w|\\d``; Python's parser leaves ``a|a`` as ``a(?:|)``)."""
    for op, av in branch:
        if op is _c.SUBPATTERN and _same_text(av[-1]):
            return True
        if op is _c.BRANCH:
            runs = [r for r in (_positions(b) for b in av[1]) if r is not None]
            for i, one in enumerate(runs):
                for two in runs[i + 1 :]:
                    if len(one) == len(two) and all(_meet(x, y) for x, y in zip(one, two)):
                        return True
    return False


def _flat(tokens: Any) -> list:
    """*tokens* with the groups at its top level opened (a group changes what is captured, not what matches)."""
    out: list = []
    for op, av in tokens:
        if op is _c.SUBPATTERN:
            out.extend(_flat(av[-1]))
        else:
            out.append((op, av))
    return out


def _splits(body: list) -> bool:
    """Can one text be split between rounds of a repeat of *body* in more than one way? Either the end
    of a round may start the next one (``(a{1,30})+``, ``(\\d|1\\d)+``), or a part of variable length
    may take what the part after it needs (``(.*a){20}``)."""
    body = _flat(body)
    if _meet(_tail(body), _first(body)):
        return True
    for i, (op, av) in enumerate(body):
        low, high = _span(op, av)
        if low == high:
            continue
        for o2, a2 in body[i + 1 :]:
            if _span(o2, a2)[0] > 0:
                if _meet(_chars(op, av), _first([(o2, a2)])):
                    return True
                break
    return False


_SLOW_SHAPES = {
    "nested": "nests an open-ended repeat inside another (like (a+)+)",
    "alternatives": "repeats alternatives that can match the same text (like (a|a)*)",
    "splits": "repeats a part whose matches can be split in more than one way (like (.*a){20} or (a{1,30}){1,30})",
}


def _slow_shape(tokens: list, rounds: float = 1) -> str | None:
    """The key of :data:`_SLOW_SHAPES` that *tokens* shows, or None; *rounds*: how often the repeats
    around *tokens* may run back to back (a repeat alone in their body runs as often times its own count)."""
    for i, (op, av) in enumerate(tokens):
        alone = all(_span(o, a)[0] == 0 for j, (o, a) in enumerate(tokens) if j != i)
        around = rounds if alone else 1
        if op in _REPEATS:
            body = list(av[2])
            if av[1] > 1 and _unbounded_inside(body):
                return "nested"
            total = around * (math.inf if av[1] == _c.MAXREPEAT else av[1])
            if total >= _MANY:
                if _same_text(body):
                    return "alternatives"
                if _splits(body):
                    return "splits"
            found = _slow_shape(body, total)
        elif op is _c.SUBPATTERN:
            found = _slow_shape(list(av[-1]), around)
        elif op is _c.BRANCH:
            found = next((f for b in av[1] if (f := _slow_shape(list(b), around))), None)
        elif op in (_c.ASSERT, _c.ASSERT_NOT):
            found = _slow_shape(list(av[1]))
        else:
            found = None
        if found:
            return found
    return None


def slow_shape(tree: list) -> str | None:
    """What makes the parsed pattern *tree* take exponential time (``"repeats alternatives that can match
    the same text (like (a|a)*)"``...), or None when none of the shapes is seen."""
    found = _slow_shape(tree)
    return _SLOW_SHAPES[found] if found else None
