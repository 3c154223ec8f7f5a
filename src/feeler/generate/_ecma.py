"""Regular expressions the ECMA-262 way, for ``pattern`` and ``patternProperties``, in bounded time.

JSON Schema 2020-12 core section 6.4 and validation section 6.3.3 name the ECMA-262 dialect
(ECMA-262 section 22.2, read here with the ``u`` flag, as JSON Schema implementations commonly do).
Python's :mod:`re` differs in ways that matter for a tester:

- ``$`` matches before a final newline in Python, only at the very end in ECMA-262;
- ``\\d``, ``\\w`` and ``\\b`` are Unicode-aware in Python, ASCII in ECMA-262;
- ``\\s`` differs in both directions (ECMA-262 adds U+FEFF; Python adds U+001C..U+001F);
- ``.`` excludes only ``\\n`` in Python, every line terminator (``\\n \\r U+2028 U+2029``) in ECMA-262;
- ECMA-262 has ``\\p{...}`` property classes, ``\\u{...}``, ``\\cX``, ``(?<name>...)``, ``\\k<name>``,
  ``[^]`` and ``[]``; Python spells these differently or not at all.

:func:`translate` turns an ECMA-262 pattern into a Python pattern source with the ECMA-262 meaning;
:func:`search` matches it in the ``regex`` engine under a time budget (:data:`MATCH_BUDGET`), never in
Python's :mod:`re`, which holds the interpreter until a match ends (no signal stops it). :func:`check`
refuses, up front, the common shapes whose matching takes exponential time in a backtracking engine
(``(a+)+``, ``(a|a)*``, ``(.*a){20}``, ``(a{1,30}){1,30}``); a pattern that slips past it and runs past
its budget raises :class:`SlowPattern`. Either way the schema becomes a
:class:`~feeler.errors.SchemaProblem` (``slow-pattern``) instead of a hang. The oracle (``ToolSchema``),
every generator and the output schemas' validator (:mod:`feeler.check.schemas`) match patterns through
this module only.
"""

from __future__ import annotations

import contextlib
import functools
import math
import re
import sys
import threading
import time
import unicodedata
from collections.abc import Iterator
from typing import Any

try:  # Python 3.11+
    import re._parser as _p
except ImportError:  # pragma: no cover - Python 3.10
    import sre_parse as _p  # type: ignore[no-redef]

from feeler.errors import SchemaProblem
from feeler.generate._backtrack import slow_shape

__all__ = ["MATCH_BUDGET", "PatternError", "SlowPattern", "budget", "check", "search", "translate"]


class PatternError(ValueError):
    """The pattern is not usable: ``reason`` is ``invalid-pattern`` or ``slow-pattern``."""

    def __init__(self, message: str, reason: str) -> None:
        super().__init__(message)
        self.reason = reason


#: ECMA-262 22.2.2.9 CharacterClassEscape, read with the u flag.
_DIGIT = "0-9"
_WORD = "A-Za-z0-9_"
#: ECMA-262 WhiteSpace (12.2) and LineTerminator (12.3): what \s matches.
_SPACE = "\\t\\n\\x0b\\x0c\\r \\xa0\\u1680\\u2000-\\u200a\\u2028\\u2029\\u202f\\u205f\\u3000\\ufeff"
_LINE_END = "\\n\\r\\u2028\\u2029"
_ESCAPES_IN_CLASS = {"d": _DIGIT, "w": _WORD, "s": _SPACE}
_CONTROL = {"t": "\\t", "n": "\\n", "v": "\\x0b", "f": "\\x0c", "r": "\\r", "0": "\\x00"}
#: Characters ECMA-262 (u flag) allows after a backslash as themselves (22.2.1 SyntaxCharacter and "/").
_SYNTAX = set("^$\\.*+?()[]{}|/")
_WORD_CLASS = f"[{_WORD}]"
_BOUNDARY = f"(?:(?<={_WORD_CLASS})(?!{_WORD_CLASS})|(?<!{_WORD_CLASS})(?={_WORD_CLASS}))"
_NOT_BOUNDARY = f"(?:(?<={_WORD_CLASS})(?={_WORD_CLASS})|(?<!{_WORD_CLASS})(?!{_WORD_CLASS}))"

#: Unicode general categories by their ECMA-262 names (long and short), Table 68 of ECMA-262.
_CATEGORIES = {
    "L": "L", "Letter": "L", "Lu": "Lu", "Uppercase_Letter": "Lu", "Ll": "Ll", "Lowercase_Letter": "Ll",
    "Lt": "Lt", "Titlecase_Letter": "Lt", "Lm": "Lm", "Modifier_Letter": "Lm", "Lo": "Lo", "Other_Letter": "Lo",
    "M": "M", "Mark": "M", "Mn": "Mn", "Mc": "Mc", "Me": "Me", "N": "N", "Number": "N", "Nd": "Nd",
    "Decimal_Number": "Nd", "digit": "Nd", "Nl": "Nl", "Letter_Number": "Nl", "No": "No", "Other_Number": "No",
    "P": "P", "Punctuation": "P", "punct": "P", "Pc": "Pc", "Pd": "Pd", "Ps": "Ps", "Pe": "Pe", "Pi": "Pi",
    "Pf": "Pf", "Po": "Po", "S": "S", "Symbol": "S", "Sm": "Sm", "Math_Symbol": "Sm", "Sc": "Sc",
    "Currency_Symbol": "Sc", "Sk": "Sk", "So": "So", "Other_Symbol": "So", "Z": "Z", "Separator": "Z",
    "Zs": "Zs", "Space_Separator": "Zs", "Zl": "Zl", "Zp": "Zp", "C": "C", "Other": "C", "Cc": "Cc",
    "Control": "Cc", "cntrl": "Cc", "Cf": "Cf", "Format": "Cf", "Co": "Co", "Private_Use": "Co",
    "Cn": "Cn", "Unassigned": "Cn",
}  # fmt: skip


@functools.lru_cache(maxsize=64)
def _category_ranges(category: str) -> str:
    """Class text (ranges) of every code point whose general category starts with *category*."""
    out: list[str] = []
    start = None
    for cp in range(sys.maxunicode + 2):
        inside = cp <= sys.maxunicode and not (0xD800 <= cp <= 0xDFFF) and unicodedata.category(chr(cp)).startswith(category)
        if inside and start is None:
            start = cp
        elif not inside and start is not None:
            out.append(_range_text(start, cp - 1))
            start = None
    return "".join(out)


def _range_text(low: int, high: int) -> str:
    one = lambda cp: f"\\U{cp:08x}"  # noqa: E731 - an escape is safe inside any class
    return one(low) if low == high else f"{one(low)}-{one(high)}"


def _complement(ranges: list[tuple[int, int]]) -> str:
    """Every code point outside *ranges*; surrogates are left out (no UTF-8 JSON text carries a lone one)."""
    out, nxt = [], 0
    for low, high in sorted([*ranges, (0xD800, 0xDFFF)]):
        if low > nxt:
            out.append(_range_text(nxt, low - 1))
        nxt = max(nxt, high + 1)
    if nxt <= sys.maxunicode:
        out.append(_range_text(nxt, sys.maxunicode))
    return "".join(out)


_NOT_DIGIT = _complement([(0x30, 0x39)])
_NOT_WORD = _complement([(0x30, 0x39), (0x41, 0x5A), (0x5F, 0x5F), (0x61, 0x7A)])
_NOT_SPACE = _complement([(9, 13), (32, 32), (0xA0, 0xA0), (0x1680, 0x1680), (0x2000, 0x200A), (0x2028, 0x2029),
                          (0x202F, 0x202F), (0x205F, 0x205F), (0x3000, 0x3000), (0xFEFF, 0xFEFF)])  # fmt: skip
_NEGATED_IN_CLASS = {"D": _NOT_DIGIT, "W": _NOT_WORD, "S": _NOT_SPACE}


class _Reader:
    def __init__(self, text: str) -> None:
        self.text, self.i = text, 0

    def peek(self, n: int = 1) -> str:
        return self.text[self.i : self.i + n]

    def take(self, n: int = 1) -> str:
        out = self.text[self.i : self.i + n]
        if len(out) < n:
            raise PatternError(f"pattern {self.text!r} ends too early", "invalid-pattern")
        self.i += n
        return out

    def done(self) -> bool:
        return self.i >= len(self.text)


def _hex(reader: _Reader, count: int) -> int:
    digits = reader.take(count)
    if not re.fullmatch(r"[0-9A-Fa-f]+", digits):
        raise PatternError(f"bad hex escape {digits!r} in pattern {reader.text!r}", "invalid-pattern")
    return int(digits, 16)


def _code_point_escape(reader: _Reader, letter: str) -> int | None:
    """The code point of a character escape after ``\\`` (``letter`` already read), or ``None``."""
    if letter == "x":
        return _hex(reader, 2)
    if letter == "u":
        if reader.peek() == "{":
            reader.take()
            end = reader.text.find("}", reader.i)
            if end < 0:
                raise PatternError(f"unclosed \\u{{ in pattern {reader.text!r}", "invalid-pattern")
            value = int(reader.text[reader.i : end] or "x", 16) if re.fullmatch(r"[0-9A-Fa-f]+", reader.text[reader.i : end]) else -1
            if not 0 <= value <= sys.maxunicode:
                raise PatternError(f"bad \\u{{...}} escape in pattern {reader.text!r}", "invalid-pattern")
            reader.i = end + 1
            return value
        value = _hex(reader, 4)
        # A surrogate pair written as two escapes is one code point under the u flag.
        if 0xD800 <= value <= 0xDBFF and reader.peek(2) == "\\u":
            save = reader.i
            reader.take(2)
            low = _hex(reader, 4)
            if 0xDC00 <= low <= 0xDFFF:
                return 0x10000 + ((value - 0xD800) << 10) + (low - 0xDC00)
            reader.i = save
        return value
    if letter == "c":
        char = reader.take()
        if not char.isascii() or not char.isalpha():
            raise PatternError(f"bad \\c escape in pattern {reader.text!r}", "invalid-pattern")
        return ord(char) % 32
    return None


def _property_class(reader: _Reader, negated: bool) -> str:
    if reader.take() != "{":
        raise PatternError(f"\\p needs {{...}} in pattern {reader.text!r}", "invalid-pattern")
    end = reader.text.find("}", reader.i)
    if end < 0:
        raise PatternError(f"unclosed \\p{{ in pattern {reader.text!r}", "invalid-pattern")
    name = reader.text[reader.i : end]
    reader.i = end + 1
    key = name.split("=", 1)[1] if name.startswith(("General_Category=", "gc=")) else name
    if key not in _CATEGORIES:
        raise PatternError(
            f"\\p{{{name}}} in pattern {reader.text!r}: feeler knows the Unicode general categories only "
            "(L, Lu, Nd, P, ...), not scripts or binary properties",
            "invalid-pattern",
        )
    ranges = _category_ranges(_CATEGORIES[key])
    if not negated:
        return ranges
    spans = [(int(m.group(1), 16), int(m.group(2) or m.group(1), 16))
             for m in re.finditer(r"\\U([0-9a-f]{8})(?:-\\U([0-9a-f]{8}))?", ranges)]  # fmt: skip
    return _complement(spans)


def _class(reader: _Reader) -> str:
    """Translate one ``[...]`` (the ``[`` already read)."""
    negated = reader.peek() == "^"
    if negated:
        reader.take()
    parts: list[str] = []
    while True:
        if reader.done():
            raise PatternError(f"unclosed [ in pattern {reader.text!r}", "invalid-pattern")
        char = reader.take()
        if char == "]":
            break
        if char == "\\":
            letter = reader.take()
            if letter in _ESCAPES_IN_CLASS:
                parts.append(_ESCAPES_IN_CLASS[letter])
            elif letter in _NEGATED_IN_CLASS:
                parts.append(_NEGATED_IN_CLASS[letter])
            elif letter in "pP":
                parts.append(_property_class(reader, letter == "P"))
            elif letter == "b":
                parts.append("\\x08")
            elif letter in _CONTROL:
                parts.append(_CONTROL[letter])
            elif letter == "-" or letter in _SYNTAX:
                parts.append("\\" + letter)
            else:
                cp = _code_point_escape(reader, letter)
                if cp is None:
                    raise PatternError(f"unknown escape \\{letter} in pattern {reader.text!r}", "invalid-pattern")
                parts.append(f"\\U{cp:08x}")
        elif char in "[]\\^-&~|":
            parts.append("\\" + char if char != "-" or not parts or reader.peek() == "]" else "-")
        else:
            parts.append(char)
    if not parts:  # [] matches nothing, [^] anything (ECMA-262 22.2.2.9)
        return "[\\s\\S]" if negated else "(?!)"
    return ("[^" if negated else "[") + "".join(parts) + "]"


def translate(pattern: str) -> str:
    """The Python :mod:`re` source that matches exactly what ECMA-262 *pattern* matches.

    :raises PatternError: ``invalid-pattern`` for syntax ECMA-262 (u flag) refuses or feeler does not know.
    """
    return _translate(pattern, False)


@functools.lru_cache(maxsize=1024)
def _translate(pattern: str, marked: bool) -> str:
    """:func:`translate`; *marked*: each alternative but the last ends in an empty look-ahead ``(?=)``
    (matching the same), so that Python's parser keeps ``x|[xy]`` as two alternatives instead of merging
    them into one class as it does for its own engine: the ``regex`` engine backtracks over both."""
    reader = _Reader(pattern)
    out: list[str] = []
    while not reader.done():
        char = reader.take()
        if char == "\\":
            letter = reader.take()
            if letter in "dws":
                out.append(f"[{_ESCAPES_IN_CLASS[letter]}]")
            elif letter in "DWS":
                out.append(f"[{_NEGATED_IN_CLASS[letter]}]")
            elif letter in "pP":
                out.append(f"[{_property_class(reader, letter == 'P')}]")
            elif letter == "b":
                out.append(_BOUNDARY)
            elif letter == "B":
                out.append(_NOT_BOUNDARY)
            elif letter in _CONTROL and not (letter == "0" and reader.peek().isdigit()):
                out.append(_CONTROL[letter])
            elif letter.isdigit():
                digits = letter
                while reader.peek().isdigit():
                    digits += reader.take()
                out.append(f"(?:\\{digits})")  # a back reference; the group keeps it apart from what follows
            elif letter == "k" and reader.peek() == "<":
                end = reader.text.find(">", reader.i)
                if end < 0:
                    raise PatternError(f"unclosed \\k< in pattern {pattern!r}", "invalid-pattern")
                out.append(f"(?P={reader.text[reader.i + 1 : end]})")
                reader.i = end + 1
            elif letter in _SYNTAX or letter == "-":
                out.append("\\" + letter)
            else:
                cp = _code_point_escape(reader, letter)
                if cp is None:
                    raise PatternError(f"unknown escape \\{letter} in pattern {pattern!r}", "invalid-pattern")
                out.append(f"\\U{cp:08x}")
        elif char == "[":
            out.append(_class(reader))
        elif char == "$":
            out.append("\\Z")  # the very end only: no match before a final newline
        elif char == ".":
            out.append(f"[^{_LINE_END}]")
        elif char == "(" and reader.peek(2) == "?<" and reader.peek(3)[2:] not in ("=", "!"):
            reader.take(2)
            out.append("(?P<")
        elif char == "(" and reader.peek() == "?" and reader.peek(2)[1:] not in (":", "=", "!", "<"):
            raise PatternError(f"group syntax (?{reader.peek(2)[1:]} in pattern {pattern!r} is not ECMA-262", "invalid-pattern")
        elif char == "|" and marked:
            out.append("(?=)|")
        else:
            out.append(char)
    source = "".join(out)
    try:
        re.compile(source)
    except (re.error, OverflowError, RecursionError) as exc:
        raise PatternError(f"pattern {pattern!r} is not a usable regular expression: {exc}", "invalid-pattern") from exc
    return source


# -- matching under a time budget ---------------------------------------------------------------------

#: Seconds one match of a schema's pattern may take (common practice: real patterns match in
#: microseconds; two seconds are far beyond any honest one). Python's :mod:`re` holds the interpreter
#: until a match ends, so a stop signal cannot interrupt it; every match of a pattern that came with a
#: schema runs in the ``regex`` engine instead, whose ``timeout=`` ends it.
MATCH_BUDGET = 2.0


class SlowPattern(SchemaProblem):
    """Matching *pattern* ran past its time budget (catastrophic backtracking): reason ``slow-pattern``.

    :param where: the tool and the pattern's place, when known (``"tool 'x': /properties/a/pattern: "``).
    """

    def __init__(self, pattern: str, budget: float, where: str = "") -> None:
        super().__init__(
            f"{where}pattern {pattern[:80]!r} took more than {budget:g}s to match one value (catastrophic "
            "backtracking), so feeler cannot judge values against it; rewrite it so that a near miss fails fast",
            reason="slow-pattern",
        )
        self.pattern, self.budget, self.where = pattern, budget, where


class _Budget(threading.local):
    """The time left to the running :func:`budget` block (per thread); outside one, each match gets the
    whole :data:`MATCH_BUDGET` and a pattern that ran past it is remembered as slow."""

    deadline = math.inf
    budget = MATCH_BUDGET


_BUDGET = _Budget()
#: Patterns a match ran past the whole budget with: every later match of them fails at once.
_SLOW: set[str] = set()
_MATCHERS: dict[str, Any] = {}
#: The last match outside a budget block: (pattern, the very text object, found).
_last: tuple[str, object, bool] = ("", None, False)
_MATCHERS_SIZE = 1024


def _matcher(pattern: str) -> Any:
    """The ``search`` method of ECMA-262 *pattern* compiled by the ``regex`` engine (cached)."""
    found = _MATCHERS.get(pattern)
    if found is None:
        import regex  # a dozen milliseconds: imported when the first pattern is matched

        source = translate(pattern)
        try:
            found = regex.compile(source).search
        except (regex.error, OverflowError, RecursionError) as exc:
            raise PatternError(f"pattern {pattern!r} is not a usable regular expression: {exc}", "invalid-pattern") from exc
        if len(_MATCHERS) >= _MATCHERS_SIZE:
            _MATCHERS.pop(next(iter(_MATCHERS)))
        _MATCHERS[pattern] = found
    return found


def search(pattern: str, text: str) -> bool:
    """Does ECMA-262 *pattern* match somewhere in *text* (JSON Schema patterns are not anchored)?

    The match runs in the ``regex`` engine under a time budget: :data:`MATCH_BUDGET` seconds, or what is
    left of the enclosing :func:`budget` block.

    :raises SlowPattern: the match ran past the budget (a :class:`~feeler.errors.SchemaProblem`).
    """
    global _last
    state = _BUDGET
    if state.deadline == math.inf:
        last = _last
        if last[1] is text and last[0] == pattern:
            return last[2]  # the same string again (a sampler's draw, then the oracle on it): one match
        if pattern in _SLOW:
            raise SlowPattern(pattern, state.budget)
        try:
            found = _matcher(pattern)(text, timeout=state.budget) is not None
        except TimeoutError as exc:
            _SLOW.add(pattern)  # the whole budget was not enough: later matches would hang the same way
            raise SlowPattern(pattern, state.budget) from exc
        _last = (pattern, text, found)
        return found
    left = min(state.deadline - time.monotonic(), state.budget)
    if left <= 0:
        raise SlowPattern(pattern, state.budget)
    try:
        return _matcher(pattern)(text, timeout=left) is not None
    except TimeoutError as exc:
        raise SlowPattern(pattern, state.budget) from exc


@contextlib.contextmanager
def budget(seconds: float = MATCH_BUDGET) -> Iterator[None]:
    """Every match inside the block shares *seconds* (one validation of a server's answer, say); a pattern
    that runs out of them is not remembered as slow, since the others may have used the time."""
    previous = _BUDGET.deadline, _BUDGET.budget
    _BUDGET.deadline, _BUDGET.budget = time.monotonic() + seconds, seconds
    try:
        yield
    finally:
        _BUDGET.deadline, _BUDGET.budget = previous


@functools.lru_cache(maxsize=1024)
def check(pattern: str) -> None:
    """Refuse a pattern that is not ECMA-262 or whose matching can take exponential time.

    The time check is a shape check on the parse tree (:func:`~._backtrack.slow_shape`), for the shapes that take exponential time on a
    near-miss string in any backtracking engine (Python's :mod:`re` and ECMA-262's own included):

    - a repeat whose body is an open-ended repeat plus only parts that may match nothing (``(a+)+``,
      ``(\\w+\\s?)*``, ``((ab)*)+``);
    - a repeat of many rounds (open-ended, or ten with the repeats around it) over alternatives
      that can match the same text (``(a|a)*``, ``(\\w|\\d)+``);
    - a repeat of many rounds whose body can be split in more than one way: the end of one round can
      start the next (``(a{1,30}){1,30}``, ``(\\d|1\\d)+``), or a part of variable length can take what
      the part after it needs (``(.*a){20}``).

    It is a guess that errs little both ways; the guarantee is the time budget of every match (:func:`search`).

    :raises PatternError: ``invalid-pattern`` or ``slow-pattern``, with a message naming the pattern.
    """
    _matcher(pattern)  # the engine every match runs in must take it too
    shape = slow_shape(list(_p.parse(_translate(pattern, True))))
    if shape:
        raise PatternError(
            f"pattern {pattern!r} {shape}: matching a near miss takes exponential time in a "
            "backtracking engine, so feeler cannot judge it. Rewrite the pattern so that each character can be "
            "matched one way only (for example ^a+$ instead of ^(a+)+$ or ^(a|a)*$)",
            "slow-pattern",
        )
