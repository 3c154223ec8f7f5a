"""`feeler diff` reads `pattern` the ECMA-262 way, as `feeler check` does.

JSON Schema 2020-12 (core 6.4, validation 6.3.3) names the ECMA-262 dialect. Python's ``re`` reads ``\\d``
as any Unicode digit and ``$`` as "at the end, or before a final newline"; ECMA-262 (``u`` flag) reads
``\\d`` as ``[0-9]`` and ``$`` (no ``m`` flag) as the end of the input only. A witness is judged here by a
reference independent of feeler: ``jsonschema`` with its pattern keywords matched by ``regress``, an
ECMA-262 engine (tests/generate/gen_reference.py).
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "generate"))

from gen_reference import reference_validator  # noqa: E402

from feeler.diff import Direction, Verdict, diff_schemas  # noqa: E402


def _code(pattern: str) -> dict[str, Any]:
    return {"type": "object", "properties": {"code": {"type": "string", "pattern": pattern}}}


def test_an_equivalent_spelling_of_digits_is_no_proven_break() -> None:
    """`\\d` and `[0-9]` match the same strings in ECMA-262: no witness exists (Python's `re` would offer a
    Unicode digit such as U+1A89 as one). The edit stays a review-grade "likely breaking", never "breaking"."""
    changes = diff_schemas(_code("^\\d+$"), _code("^[0-9]+$"), Direction.INPUT)
    assert changes and all(c.verdict is not Verdict.BREAKING for c in changes), changes
    assert all(c.witness is None for c in changes)


def test_a_final_newline_is_a_witness_only_under_ecma_262() -> None:
    """An output pattern widened to allow a final newline: ECMA-262's `$` refuses "XQ\\n" under the old
    pattern, so the widening is breaking for clients, with that witness (Python's `re` accepts it under
    both and found no witness)."""
    old, new = _code("^[A-Z]{2}$"), _code("^[A-Z]{2}\\n?$")
    [change] = [c for c in diff_schemas(old, new, Direction.OUTPUT) if c.verdict is Verdict.BREAKING]
    witness = change.witness
    assert isinstance(witness, dict) and witness["code"].endswith("\n")
    # the reference: valid under the new schema, invalid under the old one (regress, ECMA-262)
    assert reference_validator(new).is_valid(witness) and not reference_validator(old).is_valid(witness)


def test_unicode_property_classes_get_witnesses() -> None:
    """`\\p{Lu}` (ECMA-262 with the `u` flag; Python's `re` refuses it): a narrowing to ASCII capitals is
    breaking for inputs, proven by a capital outside ASCII."""
    old, new = _code("^\\p{Lu}$"), _code("^[A-Z]$")
    [change] = [c for c in diff_schemas(old, new, Direction.INPUT) if c.verdict is Verdict.BREAKING]
    assert reference_validator(old).is_valid(change.witness) and not reference_validator(new).is_valid(change.witness)


def test_a_pattern_beyond_the_builder_still_gets_a_drawn_example() -> None:
    """A back-reference (ECMA-262 22.2.2.9, AtomEscape DecimalEscape) is beyond the witness builder: the
    example is then drawn from the pattern's strings, and regress agrees it matches."""
    from gen_reference import ecma_search

    from feeler.diff.witness import _regex_example

    example = _regex_example("^(ab)\\1$", 0, None)
    assert example == "abab" and ecma_search("^(ab)\\1$", example)
