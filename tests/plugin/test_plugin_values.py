"""Known values through the pytest plugin ([tool.feeler.values]), with and without pytest-xdist (``-n 2``),
on throwaway projects with pytester (as pytest tests its own plugins).

The server is tests/servers/refuses_other_roots.py (a subprocess over stdio): every tool refuses any root
but one, and list_entries takes the string "3" where its schema says integer (JSON Schema 2020-12
validation 6.1.1; validation section 9: ``default``/``examples`` are annotations, checked before use).
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(Path(__file__).resolve().parent))
from test_plugin import _project as make_project  # noqa: E402

COMMAND = f"{sys.executable} {ROOT / 'tests' / 'servers' / 'refuses_other_roots.py'}"


def _project(pytester: pytest.Pytester, values: str = "") -> None:
    make_project(pytester, COMMAND, values)


def _failed(result: pytest.RunResult) -> set[str]:
    return {line.split("::")[-1].split(" ")[0] for line in result.outlines if line.startswith("FAILED")}


def test_without_values_each_go_item_fails_with_one_hint(pytester: pytest.Pytester) -> None:
    _project(pytester)
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "go and not no", "-rf")
    assert _failed(result) == {"list_entries[go]", "read_entry[go]", "count_entries[go]"}
    text = "\n".join(result.outlines)
    assert text.count("[values_needed]") >= 3 and "--value root=" in text
    assert "[gate_opens]" not in text


def test_with_values_on_two_workers_the_type_defect_fails_its_no_go_item(pytester: pytest.Pytester) -> None:
    # Without -n the same items run in one process; the CLI tests (tests/world) cover that runner path.
    pytest.importorskip("xdist")
    _project(pytester, '[tool.feeler.values]\nroot = "/srv/orchard"')
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-rf", "-k", "not protocol", "-n", "2")
    # Only the planted defect fails; every go item passes now that the root is known (the catalog item
    # passes too: the bad "examples" entry is a warning).
    assert _failed(result) == {"list_entries[no-go]"}
    text = "\n".join(result.outlines)
    assert "[nogo_stops]" in text and "'type'" in text
    assert "$.depth" in text or "/depth" in text
    assert "[values_needed]" not in text
    outcomes = result.parseoutcomes()
    assert outcomes.get("passed", 0) >= 6  # catalog, 3 go items, 2 clean no-go items
