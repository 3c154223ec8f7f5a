"""A short string matching a regular expression, built from the parsed pattern (no search, no randomness).

hypothesis' ``from_regex`` is the general tool, but a deterministic short match is needed many times per
schema (base instances, boundary values), so we walk the parse tree once: repeats take their minimum
(``grow`` adds to it), branches their first alternative, classes their first member. The result is
always confirmed under ECMA-262 rules (:mod:`._ecma`); ``None`` means "no luck, fall back".
"""

from __future__ import annotations

import functools
import re

from feeler.generate import _ecma

try:  # Python 3.11+
    import re._constants as _c
    import re._parser as _p
except ImportError:  # pragma: no cover - Python 3.10
    import sre_constants as _c  # type: ignore[no-redef]
    import sre_parse as _p  # type: ignore[no-redef]

__all__ = ["regex_example"]

_CATEGORY = {
    _c.CATEGORY_DIGIT: "0",
    _c.CATEGORY_NOT_DIGIT: "a",
    _c.CATEGORY_SPACE: " ",
    _c.CATEGORY_NOT_SPACE: "a",
    _c.CATEGORY_WORD: "a",
    _c.CATEGORY_NOT_WORD: "-",
}


class _Give(Exception):
    """The pattern uses a construct this builder does not handle."""


def _one_of_class(items: list, negate: bool) -> str:
    if not negate:
        op, av = items[0]
        if op is _c.LITERAL:
            return chr(av)
        if op is _c.RANGE:
            return chr(av[0])
        if op is _c.CATEGORY:
            return _CATEGORY[av]
        raise _Give
    for candidate in "aA0_-. ~xz9Z":
        probe = re.compile("[^" + "".join(_class_text(items)) + "]")
        if probe.fullmatch(candidate):
            return candidate
    raise _Give


def _class_text(items: list) -> list[str]:
    out = []
    for op, av in items:
        if op is _c.LITERAL:
            out.append(re.escape(chr(av)))
        elif op is _c.RANGE:
            out.append(re.escape(chr(av[0])) + "-" + re.escape(chr(av[1])))
        elif op is _c.CATEGORY:
            out.append({v: k for k, v in {"\\d": _c.CATEGORY_DIGIT, "\\D": _c.CATEGORY_NOT_DIGIT,
                                          "\\s": _c.CATEGORY_SPACE, "\\S": _c.CATEGORY_NOT_SPACE,
                                          "\\w": _c.CATEGORY_WORD, "\\W": _c.CATEGORY_NOT_WORD}.items()}[av])
        else:
            raise _Give
    return out


def _emit(tokens: list, grow: int) -> str:
    out = []
    for op, av in tokens:
        if op is _c.LITERAL:
            out.append(chr(av))
        elif op is _c.NOT_LITERAL:
            out.append("a" if av != ord("a") else "b")
        elif op is _c.ANY:
            out.append("a")
        elif op in (_c.AT, _c.ASSERT, _c.ASSERT_NOT):  # anchors and look-arounds emit nothing; the match is confirmed after
            continue
        elif op is _c.IN:
            negate = bool(av) and av[0][0] is _c.NEGATE
            out.append(_one_of_class(av[1:] if negate else av, negate))
        elif op in (_c.MAX_REPEAT, _c.MIN_REPEAT):
            low, high, sub = av
            count = low + grow if high == _c.MAXREPEAT else min(high, low + grow)
            out.append(_emit(list(sub), 0) * count)
        elif op is _c.SUBPATTERN:
            out.append(_emit(list(av[-1]), grow))
        elif op is _c.BRANCH:
            out.append(_emit(list(av[1][0]), grow))
        elif op is _c.GROUPREF:
            raise _Give
        else:
            raise _Give
    return "".join(out)


@functools.lru_cache(maxsize=512)
def regex_example(pattern: str, grow: int = 0) -> str | None:
    """A short string ECMA-262 *pattern* matches (:func:`feeler.generate._ecma.search`), or ``None``.

    :param grow: how many extra repetitions each open-ended repeat gets (0 = the shortest form).
    """
    try:
        text = _emit(list(_p.parse(_ecma.translate(pattern))), grow)
    except (_Give, re.error, KeyError, IndexError, TypeError, ValueError, OverflowError):
        return None
    return text if _ecma.search(pattern, text) else None
