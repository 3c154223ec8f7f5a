"""The value pool: keys, precedence and bounded memory (common practice for a bounded cache)."""

from __future__ import annotations

import pytest

from feeler.world import ValuePool
from feeler.world.values import pointer_of


def test_dollar_paths_become_json_pointers() -> None:
    # RFC 6901: "~" is written "~0" and "/" is written "~1" inside a reference token.
    assert pointer_of("$.owner.email") == "/owner/email"
    assert pointer_of("$.items[0].sku") == "/items/0/sku"
    assert pointer_of("$['a/b']") == "/a~1b"
    assert pointer_of("/owner/email") == "/owner/email"
    assert pointer_of("$") == ""
    assert pointer_of("email") is None
    with pytest.raises(ValueError, match="not a JSON path"):
        pointer_of("$..x")


def test_most_specific_first_and_known_values_first() -> None:
    pool = ValuePool()
    pool.add("root", "/any", source="learned", provenance="listing")
    pool.add("root", "/mine", source="known", provenance="--value", tool="read")
    pool.add("$.root", "/placed", source="known", provenance="--value")
    assert [v.value for v in pool.values_for("read", "/root", "root")] == ["/mine", "/placed", "/any"]
    assert [v.value for v in pool.values_for("other", "/root", "root")] == ["/placed", "/any"]


def test_memory_is_bounded_but_known_values_stay() -> None:
    pool = ValuePool(per_key=2)
    pool.add("id", 1, source="known", provenance="user")
    for n in range(2, 50):
        pool.add("id", n, source="learned", provenance="answer")
    assert len(pool) == 2
    assert [v.value for v in pool.values_for("t", "/id", "id")] == [1, 49]
    assert pool.add("id", 49, source="learned", provenance="again") is False


def test_unknown_source_is_refused() -> None:
    with pytest.raises(ValueError, match="source='guess'"):
        ValuePool().add("id", 1, source="guess", provenance="x")
