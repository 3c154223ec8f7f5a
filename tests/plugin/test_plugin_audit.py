"""The pytest plugin's `catalog` item runs the catalog audit (issue 11: "part of check and the plugin's catalog
item"), on throwaway projects with pytester.

References: JSON Schema 2020-12 Core 6.5 (an unknown keyword such as `ge` enforces nothing); MCP 2025-11-25
server/tools (tool names SHOULD be unique; ToolAnnotations; Security: descriptions are untrusted).
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

SERVERS = Path(__file__).resolve().parents[1] / "servers"


def _project(pytester: pytest.Pytester, server: str, extra: str = "") -> None:
    pytester.makefile(".toml", pyproject=f"""
        [tool.feeler]
        targets = {{ audited = {f"{sys.executable} {SERVERS / server}"!r} }}
        samples = 1
        replay_dir = "replays"
        {extra}
        """)


def test_catalog_item_fails_on_the_sloppy_catalog(pytester: pytest.Pytester, monkeypatch: pytest.MonkeyPatch) -> None:
    """The audit's errors fail the catalog item and are shown; its warnings do not fail it."""
    monkeypatch.delenv("PYTEST_XDIST_WORKER", raising=False)
    _project(pytester, "sloppy_catalog.py")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog", "-rf")
    result.assert_outcomes(failed=1)
    text = "\n".join(result.outlines)
    for shown in ("[schema_keywords]", "did you mean minimum", "[tool_names_unique]", "[annotations_agree]",
                  "[output_schema_valid]"):
        assert shown in text, shown
    assert "[distinct_descriptions]" not in text  # a warning: listed in reports, it does not fail the item


def test_catalog_item_fails_on_poisoned_text_and_passes_a_clean_catalog(pytester: pytest.Pytester,
                                                                        monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("PYTEST_XDIST_WORKER", raising=False)
    _project(pytester, "poisoned_catalog.py")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog", "-rf")
    result.assert_outcomes(failed=1)
    assert any("[poisoned_text]" in line and "id_rsa" in line for line in result.outlines)
    _project(pytester, "clean_reference.py")
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider", "-q", "-k", "catalog", "-rs")
    outcomes = result.parseoutcomes()
    assert outcomes.get("failed", 0) == 0 and outcomes.get("passed", 0) + outcomes.get("skipped", 0) == 1
