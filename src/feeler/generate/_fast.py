"""Seeded values built by construction with :class:`random.Random`, outside hypothesis' engine.

hypothesis spends most of a draw on its own bookkeeping (choice sequences, health checks, the
``@given`` loop), which caps drawn go cases at a few hundred per second. Here each shape of the
compiled model (:mod:`._model`) becomes one small sampler (a closure ``rng -> value``), made once; a
case is one call of the root sampler. A shape that is not satisfied by construction
(:attr:`~._model.Shape.exact` false: ``not``, ``if``, ``contains``...) is sampled from its merged
keywords and filtered by its own oracle; a shape that still cannot be sampled draws from a small pool
of hypothesis values made once per shape (:func:`~feeler.generate._strategies.searched_examples`).

The oracle (``ToolSchema.is_valid``, the whole schema) guards the values as follows. When the root
shape is not exact, every value is checked. When it is exact, the values are valid by construction and
the oracle audits every :data:`AUDIT_EVERY`-th one (the first included): whole-schema validation costs
several times the draw itself, and sampled cases are the hot path of a campaign. A value the audit
refuses is a bug in feeler's samplers: it is dropped, the values kept so far are checked one by one,
every later value of that schema is checked too, and the disagreement is said once (a
:class:`GeneratorBugWarning` warning; :func:`sampler_mismatch`). Whatever the audit saw, the runner
proves a sampled go case with the oracle before any finding from it is recorded
(``Runner._refuted``), and the property tests hold the samplers' values to an independent validator.
The same seed gives the same values.
"""

from __future__ import annotations

import copy
import math
import random
import re
import string
import warnings
from collections.abc import Callable
from decimal import Decimal
from typing import Any

from feeler._json import canonical_value, sorted_compact_dumps
from feeler.generate import _ecma
from feeler.generate._formats import FORMAT_SAMPLES
from feeler.generate._model import Shape, model_of
from feeler.generate._regex import _c, _p, regex_example
from feeler.generate._schema import ToolSchema
from feeler.generate._strategies import Unbuildable, searched_examples

__all__ = ["AUDIT_EVERY", "GeneratorBugWarning", "Miss", "ObjectPlan", "fast_values", "sampler_for", "sampler_mismatch", "typed_sampler"]

Sampler = Callable[[random.Random], Any]

#: Tries per shape before a filtered sampler gives up on this value.
_TRIES = 8
#: Refused draws (and an empty pool) after which a filtered sampler that never succeeded stops trying.
_GIVE_UP = 64
#: Unbounded sizes are capped this far above the lower bound: tool arguments are small.
_SPAN = 4
#: Unbounded numbers are drawn this far from their one bound (or from 0).
_REACH = 1000
#: Pool size for shapes only hypothesis can draw.
_POOL = 30
_ASCII = string.ascii_letters + string.digits
_PRINTABLE = "".join(chr(c) for c in range(32, 127))
#: A few characters outside ASCII (2-, 3- and 4-byte UTF-8): servers must take any code point.
_WIDE = "éßøΩжあ中🙂"
_KEY_CHARS = string.ascii_lowercase + "_"
_LABEL = string.ascii_lowercase + string.digits
#: With an exact root shape, the oracle checks every AUDIT_EVERY-th value (see the module docstring).
AUDIT_EVERY = 16


class GeneratorBugWarning(UserWarning):
    """feeler's oracle refused a value feeler's own generator made as valid (a sampler's value built as
    valid by construction, or a go case's arguments): a bug in feeler, please report it with the schema.
    Such a value is dropped or gives no finding."""


class _Miss(Exception):
    """This draw did not satisfy the shape; the caller draws again."""


#: What a sampler raises when one draw missed (besides Unbuildable): for callers that draw again.
Miss = _Miss


def sampler_for(shape: Shape, pool: bool = True) -> Sampler:
    """The sampler of values for *shape* (made once per shape and kept on it).

    :param pool: when the shape's own draws keep failing, fall back to a pool of hypothesis values
        (costly: a search); without it the sampler just misses (callers with a cheaper plan B).
    """
    key = "_sampler" if pool else "_sampler_no_pool"
    found = shape.__dict__.get(key)
    if found is None:
        holder: list[Sampler] = []
        # A forwarding sampler first, in case the shape is reached again while it is being made.
        shape.__dict__[key] = lambda rng: holder[0](rng)
        holder.append(_compile(shape, pool))
        found = shape.__dict__[key] = holder[0]
    return found


def fast_values(ts: ToolSchema, count: int, rng: random.Random) -> tuple[list[Any], int]:
    """Up to *count* values for the whole schema, and how many candidates were refused.

    Values of an exact root shape are valid by construction and audited by the oracle (every
    :data:`AUDIT_EVERY`-th one); other values are each checked (see the module docstring). Stops early
    (returning fewer) when the refusals outnumber the accepted values by far: the caller then fills the
    rest from hypothesis.
    """
    shape = model_of(ts).root_shape
    root = sampler_for(shape)
    audit = AUDIT_EVERY if shape.exact and sampler_mismatch(ts) is None else 1
    out: list[Any] = []
    seen: set[str] = set()
    refused = 0
    made = 0  # values built (and not refused) so far: the audit's clock
    budget = 20 * count + 50
    while len(out) < count and budget > 0:
        budget -= 1
        try:
            value = root(rng)
        except (_Miss, Unbuildable):
            refused += 1
            continue
        if made % audit == 0 and not ts.is_valid(value):
            refused += 1
            if audit > 1:  # valid by construction, yet refused: say so, and trust the construction no more
                _mismatch(ts, shape, value)
                audit = 1
                kept = [v for v in out if ts.is_valid(v)]  # the values so far, checked one by one now
                refused += len(out) - len(kept)
                out[:] = kept
            continue
        made += 1
        # Prefer a new value, but accept a repeat now and then: small enums have few values.
        key = _value_key(value)
        if key in seen and rng.random() < 0.9:
            continue
        seen.add(key)
        out.append(value)
    return out, refused


def _value_key(value: Any) -> str:
    """A canonical text of *value* (equal for the values :func:`~feeler._json.canonical_dumps` writes
    alike), compact and written by the C encoder: only a float like ``2.0`` needs the canonical pass."""
    text = sorted_compact_dumps(value)
    if "." in text:  # a whole float (2.0) is written with a dot below 2**53; canonical_dumps writes it as 2
        text = sorted_compact_dumps(canonical_value(value))
    return text


def sampler_mismatch(ts: ToolSchema) -> str | None:
    """Why the oracle no longer trusts the root sampler of *ts* (a value built as valid was refused), or
    None while every audit agreed."""
    return model_of(ts).root_shape.__dict__.get("_mismatch")


def _mismatch(ts: ToolSchema, shape: Shape, value: Any) -> None:
    errors = ts.errors(value)
    why = errors[0].message if errors else "refused"
    note = (f"{ts.where}feeler's sampler built a value the schema refuses ({why[:200]}): a bug in feeler's "
            f"generator, please report it with the schema; every value of this schema is now checked")
    shape.__dict__["_mismatch"] = note
    warnings.warn(note, GeneratorBugWarning, stacklevel=3)


# -- compilation ---------------------------------------------------------------------------------------


def _compile(shape: Shape, pool: bool = True) -> Sampler:
    if shape.never:
        return _never
    if not shape.parts:
        return _any_json
    try:
        inner = _compile_known(shape)
    except Unbuildable:
        return _pool(shape) if pool else _never
    return inner if shape.exact else _filtered(shape, inner, pool)


def _compile_known(shape: Shape) -> Sampler:
    if shape.members is not None:
        members = shape.members
        if not members:
            raise Unbuildable
        return lambda rng: copy.deepcopy(rng.choice(members))
    for keyword in ("anyOf", "oneOf"):
        groups = shape.groups(keyword)
        if groups:
            location, branches = groups[0]
            return _choice([sampler_for(shape.choose(location, b)) for b in branches])
    if shape.conditionals:
        location, if_, then, else_ = shape.conditionals[0]
        return _choice([sampler_for(shape.choose(location, if_, then)), sampler_for(shape.choose(location, else_))])
    parts = []
    for kind in shape.types:
        try:
            parts.append(_TYPES[kind](shape))
        except Unbuildable:
            continue
    if not parts:
        raise Unbuildable
    if len(parts) == 1:
        return parts[0]
    return lambda rng: rng.choice(parts)(rng)


def _choice(branches: list[Sampler]) -> Sampler:
    """A branch at random (anyOf/oneOf branches, if outcomes); the caller's filter keeps valid values."""
    if not branches:
        raise Unbuildable

    def sample(rng: random.Random) -> Any:
        for _ in range(_TRIES):
            try:
                return rng.choice(branches)(rng)
            except (_Miss, Unbuildable):
                continue
        raise _Miss

    return sample


def _filtered(shape: Shape, inner: Sampler, with_pool: bool = True) -> Sampler:
    pool: list[Sampler] = []
    hits = [0, 0]  # values accepted, draws refused

    def sample(rng: random.Random) -> Any:
        if not hits[0] and hits[1] >= _GIVE_UP:
            raise Unbuildable  # nothing was ever accepted here, nor found by the pool: stop paying for it
        for _ in range(_TRIES):
            try:
                value = inner(rng)
            except (_Miss, Unbuildable):
                hits[1] += 1
                continue
            if shape.accepts(value):
                hits[0] += 1
                return value
            hits[1] += 1
        if not with_pool:
            raise _Miss
        if not pool:
            pool.append(_pool(shape))
        try:
            value = pool[0](rng)
        except Unbuildable:
            hits[1] = max(hits[1], _GIVE_UP)
            raise
        hits[0] += 1
        return value

    return sample


def _pool(shape: Shape) -> Sampler:
    """Values only hypothesis can find: drawn once (deterministically), then picked from at random."""
    values: list[Any] | None = None

    def sample(rng: random.Random) -> Any:
        nonlocal values
        if values is None:
            values = [v for v in searched_examples(shape, _POOL) if shape.accepts(v)]
        if not values:
            raise Unbuildable
        return copy.deepcopy(rng.choice(values))

    return sample


def _never(rng: random.Random) -> Any:
    raise Unbuildable


def _any_json(rng: random.Random, depth: int = 0) -> Any:
    roll = rng.random()
    if depth < 2 and roll < 0.15:
        return [_any_json(rng, depth + 1) for _ in range(rng.randint(0, 3))]
    if depth < 2 and roll < 0.3:
        return {_key(rng): _any_json(rng, depth + 1) for _ in range(rng.randint(0, 3))}
    return rng.choice((None, True, False, rng.randint(-(2**31), 2**31), _text(rng, 0, 8)))


# -- scalars -------------------------------------------------------------------------------------------


def _integer(shape: Shape) -> Sampler:
    low, _ = shape.bound("low", True)
    high, _ = shape.bound("high", True)
    steps = shape.steps or [1]
    if not all(float(s).is_integer() for s in steps):
        raise Unbuildable
    step = math.lcm(*(int(s) for s in steps)) or 1
    low, high = _span(low, high)
    klow, khigh = math.ceil(low / step), math.floor(high / step)
    if klow > khigh:
        raise Unbuildable

    def sample(rng: random.Random) -> int:
        roll = rng.random()
        # Bounds and zero now and then: the values a server most often gets wrong.
        if roll < 0.1:
            return klow * step
        if roll < 0.2:
            return khigh * step
        return rng.randint(klow, khigh) * step

    return sample


def _number(shape: Shape) -> Sampler:
    low, _ = shape.bound("low", False)
    high, _ = shape.bound("high", False)
    low, high = _span(low, high)
    if low > high:
        raise Unbuildable
    if shape.steps:
        step = Decimal(repr(shape.steps[0]))
        klow = math.ceil(Decimal(repr(low)) / step)
        khigh = math.floor(Decimal(repr(high)) / step)
        if klow > khigh:
            raise Unbuildable

        def stepped(rng: random.Random) -> float | int:
            value = rng.randint(klow, khigh) * step  # decimal: no float drift in k * step
            return int(value) if value == value.to_integral_value() else float(value)

        return stepped
    ilow, ihigh = math.ceil(low), math.floor(high)

    def sample(rng: random.Random) -> float | int:
        roll = rng.random()
        if roll < 0.1:
            return low
        if roll < 0.2:
            return high
        if roll < 0.5 and ilow <= ihigh:
            return rng.randint(ilow, ihigh)
        value = round(rng.uniform(low, high), rng.choice((1, 2, 3, 6)))
        return value if low <= value <= high else low

    return sample


def _span(low: float | None, high: float | None) -> tuple[float, float]:
    if low is None and high is None:
        return -_REACH, _REACH
    if low is None:
        return high - _REACH, high  # type: ignore[operator]
    if high is None:
        return low, low + _REACH
    return low, high


#: Characters a server's own code often mishandles (common practice of fuzzers): quoting and escaping,
#: regular expression and format syntax, path separators, white space and control characters, invisible
#: and right-to-left marks, a combining accent, characters beyond U+FFFF.
_ODD = "\"'\\`[](){}<>*+?|^$%&;:,./!@#~=-_ \t\n\r\x00\x1b\u200b\u202e\u0301\ufeff\U0001d11e"
#: Whole strings that break naive code (common practice: a fuzzer's dictionary): taken when their length fits.
_TRICKY = (
    " ", "[", "(", "*", "\\", "'", '"', "%s", "{0}", "${x}", "{{x}}", "../", "..\\", "\n", "\x00", "null",
    "NaN", "-1", "0", "true", "<b>", "' OR '1'='1", "a\u0301", "\u202eabc", "\U0001d11e",
)


_ODD_MIX = _ODD + _ASCII + _WIDE
_WIDE_MIX = _ASCII + _WIDE + " "


def _text(rng: random.Random, low: int, high: int, tricky: list[str] | None = None) -> str:
    """A string of *low* to *high* code points: mostly letters and digits (what a schema's examples look
    like), often printable ASCII with its punctuation, sometimes odd characters or a known tricky string
    (*tricky*: those of :data:`_TRICKY` whose length fits, when the caller worked them out already)."""
    roll = rng.random()
    if roll < 0.1:
        if tricky is None:
            tricky = [t for t in _TRICKY if low <= len(t) <= high]
        if tricky:
            return rng.choice(tricky)
    size = rng.randint(low, high)
    if roll < 0.25:
        return _chars(rng, _ODD_MIX, size)
    if roll < 0.5:
        return _chars(rng, _PRINTABLE, size)
    if roll < 0.6:
        return _chars(rng, _WIDE_MIX, size)
    return _chars(rng, _ASCII, size)


def _chars(rng: random.Random, alphabet: str, size: int) -> str:
    """*size* characters of *alphabet*, each ``rng.choice(alphabet)``: for CPython's Random the choice is
    inlined (``getrandbits`` until below the alphabet's size, as ``Random._randbelow`` does), the same
    characters at a third of the cost; strings are most of a sampled value."""
    if type(rng)._randbelow is not _RANDBELOW:
        choice = rng.choice
        return "".join([choice(alphabet) for _ in range(size)])
    bits = rng.getrandbits
    count = len(alphabet)
    width = count.bit_length()
    out = []
    for _ in range(size):
        pick = bits(width)
        while pick >= count:
            pick = bits(width)
        out.append(alphabet[pick])
    return "".join(out)


_RANDBELOW = getattr(random.Random, "_randbelow_with_getrandbits", None)


def _string(shape: Shape) -> Sampler:
    return _text_sampler(shape.min_length, shape.max_length, shape.formats, shape.patterns)


def _text_sampler(low: int, high: int | None, formats: list[str], patterns: list[str]) -> Sampler:
    if high is not None and high < low:
        raise Unbuildable
    fits = lambda s: len(s) >= low and (high is None or len(s) <= high)  # noqa: E731 - code points, as JSON Schema counts
    if formats:
        fmt = formats[0]
        if fmt in _FORMATS:
            maker: Sampler = _FORMATS[fmt]
        elif fmt in FORMAT_SAMPLES:
            maker = lambda rng: FORMAT_SAMPLES[fmt]  # noqa: E731 - one known-good value
        else:
            raise Unbuildable
        return _tried(maker, fits)
    if patterns:
        pattern = patterns[0]
        try:
            tree = list(_p.parse(_ecma.translate(pattern)))
        except (re.error, OverflowError, RecursionError, _ecma.PatternError) as exc:
            raise Unbuildable from exc
        fallback = [t for t in (regex_example(pattern, g) for g in (0, 1, 3, 8)) if t is not None and fits(t)]

        def matching(rng: random.Random) -> str:
            for _ in range(_TRIES):
                try:
                    text = _emit(tree, rng)
                except _Give:
                    break
                if fits(text) and _ecma.search(pattern, text):
                    return text
            if fallback:
                return rng.choice(fallback)
            raise _Miss

        return matching
    top = high if high is not None else low + 2 * _SPAN
    tricky = [t for t in _TRICKY if low <= len(t) <= top]
    return lambda rng: _text(rng, low, top, tricky)


def _tried(maker: Sampler, ok: Callable[[Any], bool]) -> Sampler:
    def sample(rng: random.Random) -> Any:
        for _ in range(_TRIES):
            value = maker(rng)
            if ok(value):
                return value
        raise _Miss

    return sample


# -- formats (RFC 3339 dates and times, RFC 5321 mailboxes, RFC 3986 URIs, RFC 9562 UUIDs...) ------------


def _label(rng: random.Random) -> str:
    return "".join(rng.choice(_LABEL) for _ in range(rng.randint(1, 10)))


def _host(rng: random.Random) -> str:
    # Under example.org, reserved for documentation (RFC 2606).
    return ".".join(_label(rng) for _ in range(rng.randint(1, 3))) + ".example.org"


def _date(rng: random.Random) -> str:
    return f"{rng.randint(1970, 2100):04d}-{rng.randint(1, 12):02d}-{rng.randint(1, 28):02d}"


def _time(rng: random.Random) -> str:
    zone = rng.choice(("Z", "+00:00", "+05:30", "-08:00"))
    return f"{rng.randint(0, 23):02d}:{rng.randint(0, 59):02d}:{rng.randint(0, 59):02d}{zone}"


def _uuid(rng: random.Random) -> str:
    h = f"{rng.getrandbits(128):032x}"
    # Version 4, RFC 9562 variant bits.
    return f"{h[:8]}-{h[8:12]}-4{h[13:16]}-{'89ab'[rng.randint(0, 3)]}{h[17:20]}-{h[20:32]}"


def _ipv6(rng: random.Random) -> str:
    # 2001:db8::/32 is the documentation prefix (RFC 3849).
    return "2001:db8:" + ":".join(f"{rng.getrandbits(16):x}" for _ in range(6))


_FORMATS: dict[str, Sampler] = {
    "date": _date,
    "time": _time,
    "date-time": lambda rng: f"{_date(rng)}T{_time(rng)}",
    "email": lambda rng: f"{_label(rng)}@{_host(rng)}",
    "idn-email": lambda rng: f"{_label(rng)}@{_host(rng)}",
    "uri": lambda rng: f"https://{_host(rng)}/{_label(rng)}",
    "iri": lambda rng: f"https://{_host(rng)}/{_label(rng)}",
    "uri-reference": lambda rng: f"/{_label(rng)}/{rng.randint(0, 999)}",
    "iri-reference": lambda rng: f"/{_label(rng)}/{rng.randint(0, 999)}",
    "uuid": _uuid,
    # 192.0.2.0/24, 198.51.100.0/24 and 203.0.113.0/24 are for documentation (RFC 5737).
    "ipv4": lambda rng: f"{rng.choice(('192.0.2', '198.51.100', '203.0.113'))}.{rng.randint(0, 255)}",
    "ipv6": _ipv6,
    "hostname": _host,
    "idn-hostname": _host,
}


# -- regular expressions -------------------------------------------------------------------------------


class _Give(Exception):
    """The pattern uses a construct this emitter does not handle (back references, look-arounds...)."""


_CATEGORY = {
    _c.CATEGORY_DIGIT: string.digits,
    _c.CATEGORY_NOT_DIGIT: string.ascii_letters + " -_.",
    _c.CATEGORY_SPACE: " ",
    _c.CATEGORY_NOT_SPACE: _ASCII + "-_.",
    _c.CATEGORY_WORD: _ASCII + "_",
    _c.CATEGORY_NOT_WORD: " -.,:;",
}


def _class_member(items: list, rng: random.Random) -> str:
    negate = bool(items) and items[0][0] is _c.NEGATE
    if negate:
        members = items[1:]
        for _ in range(_TRIES):
            char = rng.choice(_PRINTABLE)
            if not any(_in_item(char, op, av) for op, av in members):
                return char
        raise _Give
    op, av = rng.choice(items)
    if op is _c.LITERAL:
        return chr(av)
    if op is _c.RANGE:
        return chr(rng.randint(av[0], av[1]))
    if op is _c.CATEGORY and av in _CATEGORY:
        return rng.choice(_CATEGORY[av])
    raise _Give


def _in_item(char: str, op: Any, av: Any) -> bool:
    if op is _c.LITERAL:
        return ord(char) == av
    if op is _c.RANGE:
        return av[0] <= ord(char) <= av[1]
    if op is _c.CATEGORY and av in _CATEGORY:
        return re.fullmatch({_c.CATEGORY_DIGIT: r"\d", _c.CATEGORY_NOT_DIGIT: r"\D", _c.CATEGORY_SPACE: r"\s",
                             _c.CATEGORY_NOT_SPACE: r"\S", _c.CATEGORY_WORD: r"\w", _c.CATEGORY_NOT_WORD: r"\W"}[av],
                            char) is not None  # fmt: skip
    raise _Give


def _emit(tokens: list, rng: random.Random) -> str:
    out = []
    for op, av in tokens:
        if op is _c.LITERAL:
            out.append(chr(av))
        elif op is _c.NOT_LITERAL:
            out.append(next(c for c in rng.sample(_ASCII, 3) if ord(c) != av))
        elif op is _c.ANY:
            out.append(rng.choice(_ASCII))
        elif op in (_c.AT, _c.ASSERT, _c.ASSERT_NOT):  # anchors and look-arounds emit nothing; the match is confirmed after
            continue
        elif op is _c.IN:
            out.append(_class_member(av, rng))
        elif op in (_c.MAX_REPEAT, _c.MIN_REPEAT):
            low, high, sub = av
            top = low + _SPAN if high == _c.MAXREPEAT else min(high, low + _SPAN)
            sub = list(sub)
            out.extend(_emit(sub, rng) for _ in range(rng.randint(low, top)))
        elif op is _c.SUBPATTERN:
            out.append(_emit(list(av[-1]), rng))
        elif op is _c.BRANCH:
            out.append(_emit(list(rng.choice(av[1])), rng))
        else:
            raise _Give
    return "".join(out)


# -- containers ----------------------------------------------------------------------------------------


def _array(shape: Shape) -> Sampler:
    prefix = [sampler_for(s) for s in shape.prefix]
    rest = shape.rest
    contained = shape.contains[0] if shape.contains else None
    tail = sampler_for(rest) if not rest.never else None
    matching = sampler_for(rest.merge(contained[0])) if contained is not None and tail is not None else None
    low, high = shape.min_items, shape.max_items
    if contained is not None:
        low = max(low, contained[1])
    if high is None:
        high = max(low, len(prefix)) + _SPAN
    if tail is None:
        high = min(high, len(prefix))
    if low > high:
        raise Unbuildable
    unique = shape.unique

    def sample(rng: random.Random) -> list:
        size = rng.randint(low, high)
        out = [make(rng) for make in prefix[:size]]
        keys = {_value_key(v) for v in out} if unique else set()
        misses = 0
        wanted = contained[1] if contained is not None else 0
        while len(out) < size:
            make = matching if matching is not None and wanted > 0 else tail
            try:
                value = make(rng)  # type: ignore[misc]
            except (_Miss, Unbuildable):
                if len(out) >= low and make is tail:
                    break  # a shorter array is still valid (an item schema nothing satisfies allows only [])
                raise
            if unique:
                key = _value_key(value)
                if key in keys:
                    misses += 1
                    if misses > 4 * size + 8:
                        if len(out) >= low:
                            break  # fewer distinct items exist than drawn for: keep the shorter array
                        raise _Miss
                    continue
                keys.add(key)
            out.append(value)
            wanted -= make is matching
        return out

    return sample


class ObjectPlan:
    """How objects of one shape are sampled: the names, a sampler per value, the extra keys."""

    def __init__(self, shape: Shape) -> None:
        self.shape = shape
        self.required = shape.required
        self.depends = shape.depends
        self.low, self.high = shape.min_props, shape.max_props
        for name in self.required:
            if shape.for_key(name).never:
                raise Unbuildable
        names = list(dict.fromkeys([*self.required, *shape.declared, *(n for v in self.depends.values() for n in v)]))
        self.values = {name: sampler_for(shape.for_key(name)) for name in names}
        self.optional = [n for n in shape.declared if n not in self.required and not shape.for_key(n).never]
        self.extras: list[Sampler] = []
        for pattern in shape.pattern_keys:
            try:
                self.extras.append(_text_sampler(0, None, [], [pattern]))
            except Unbuildable:
                continue
        self.free: Sampler | None = None
        if shape.extra is not None:
            self.free = sampler_for(shape.names) if shape.names is not None else _key
            if shape.extra.parts or shape.names is not None:
                self.extras.append(self.free)
        #: no extra keys, nothing depends, no upper count and the required properties reach the lower one:
        #: finish() has nothing to do
        self.plain = not self.extras and not self.depends and self.high is None and self.low <= len(self.required)

    def _add(self, out: dict, keys: Sampler, rng: random.Random) -> None:
        key = keys(rng)
        if isinstance(key, str) and key not in out:
            target = self.shape.for_key(key)
            if not target.never:
                out[key] = sampler_for(target)(rng)

    def finish(self, out: dict, rng: random.Random, extras: bool = True) -> dict:
        """*out* (the required and some optional properties) with extra keys (when *extras*), the
        properties ``dependentRequired`` asks for, and within ``minProperties``/``maxProperties``."""
        if self.plain:
            return out  # nothing below would change it or draw from rng
        for keys in self.extras if extras else ():
            if rng.random() < 0.3:
                for _ in range(rng.randint(1, 2)):
                    self._add(out, keys, rng)
        spare = [n for n in self.optional if n not in out]
        while len(out) < self.low and spare:
            name = spare.pop(rng.randrange(len(spare)))
            out[name] = self.values[name](rng)
        for _ in range(4 * self.low if self.free is not None else 0):  # bounded: minProperties past the declared names
            if len(out) >= self.low:
                break
            self._add(out, self.free, rng)  # type: ignore[arg-type]
        for trigger, needs in self.depends.items():
            if trigger in out:
                for name in needs:
                    if name not in out:
                        out[name] = self.values[name](rng)
        if self.high is not None and len(out) > self.high:
            keep = set(self.required) | {n for t, needs in self.depends.items() if t in out for n in needs}
            for name in [n for n in out if n not in keep]:
                if len(out) <= self.high:
                    break
                del out[name]
            if len(out) > self.high:
                raise _Miss  # the required properties and what they depend on do not fit: draw again
        return out


def _object(shape: Shape) -> Sampler:
    plan = ObjectPlan(shape)

    def sample(rng: random.Random) -> dict:
        out = {name: plan.values[name](rng) for name in plan.required}
        for name in plan.optional:
            if rng.random() < 0.5:
                try:
                    out[name] = plan.values[name](rng)
                except (_Miss, Unbuildable):
                    continue  # optional: an unsatisfiable or unlucky property is left out
        return plan.finish(out, rng)

    return sample


def typed_sampler(shape: Shape, kind: str) -> Sampler:
    """A sampler of values of JSON type *kind* for *shape* (filtered by its oracle where it is not exact).

    :raises Unbuildable: the shape allows no such value by construction.
    """
    inner = _TYPES[kind](shape)
    return inner if shape.exact else _filtered(shape, inner, False)


def _key(rng: random.Random) -> str:
    return "".join(rng.choice(_KEY_CHARS) for _ in range(rng.randint(1, 8)))


_TYPES: dict[str, Callable[[Shape], Sampler]] = {
    "null": lambda shape: lambda rng: None,
    "boolean": lambda shape: lambda rng: rng.random() < 0.5,
    "integer": _integer,
    "number": _number,
    "string": _string,
    "array": _array,
    "object": _object,
}
