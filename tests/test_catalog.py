"""Catalog capture of the demo over stdio, Streamable HTTP and in-process, in both eras, and the canonical form.

Outside references: MCP 2026-07-28 basic/versioning and basic/transports ("backward compatibility": a
dual-era client that prefers the newest revision lands in the stateless era when the server speaks it),
MCP 2025-11-25 basic/lifecycle (a pinned handshake revision is echoed), MCP 2025-11-25 server/tools,
server/prompts, server/resources (the list methods and their pagination), JSON Schema 2020-12 Core
section 4.2.2 (1.0 and 1 are the same number, which is why the canonical form writes 1).
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from typing import Any

import pytest

from feeler.catalog import CATALOG_FORMAT, Catalog
from feeler.connect import capture_catalog
from feeler.errors import UsageError
from feeler.target import Target

INPROCESS = "feeler.demo.server:server"
TRANSPORTS = ("stdio", "http", "inprocess")
#: None = automatic era detection; the others pin one handshake-era revision
REVISIONS = (None, "2025-11-25", "2024-11-05")
#: each stdio start of the demo costs seconds (SDK import): the oldest revision is checked on the other two
SKIPPED = {("stdio", "2024-11-05")}


def _kinds(revision: str | None) -> list[str]:
    return [kind for kind in TRANSPORTS if (kind, revision) not in SKIPPED]


@pytest.fixture(scope="module")
def catalogs(demo_http_url: str, demo_stdio: Target) -> Iterator[dict[tuple[str, str | None], Catalog]]:
    """Every (transport, revision) catalog of the demo, captured once for the module."""
    targets: dict[str, Target | str] = {"stdio": demo_stdio, "http": demo_http_url, "inprocess": INPROCESS}
    yield {
        (kind, revision): capture_catalog(targets[kind], revision=revision, timeout=20)
        for kind in TRANSPORTS
        for revision in REVISIONS
        if (kind, revision) not in SKIPPED
    }


@pytest.mark.parametrize("kind", TRANSPORTS)
def test_automatic_detection_lands_in_the_modern_era(catalogs: dict[Any, Catalog], kind: str) -> None:
    cat = catalogs[(kind, None)]
    # MCP 2026-07-28 basic/transports, backward compatibility: server/discover answered -> stateless era
    assert (cat.revision, cat.era) == ("2026-07-28", "stateless")
    # MCP 2026-07-28 server/discover: supportedVersions lists the revision in use
    assert "2026-07-28" in cat.supported_revisions


@pytest.mark.parametrize(
    "kind, revision", [(k, r) for r in ("2025-11-25", "2024-11-05") for k in _kinds(r)]
)
def test_a_pinned_handshake_revision_is_used(catalogs: dict[Any, Catalog], kind: str, revision: str) -> None:
    cat = catalogs[(kind, revision)]
    # MCP 2025-11-25 basic/lifecycle, version negotiation: a server supporting the requested version echoes it
    assert (cat.revision, cat.era) == (revision, "handshake")
    assert cat.supported_revisions == [revision]


@pytest.mark.parametrize("revision", REVISIONS)
def test_the_three_transports_give_identical_catalogs(catalogs: dict[Any, Catalog], revision: str | None) -> None:
    # issue 2 acceptance: "the three catalogs are identical" (canonical JSON, byte for byte)
    texts = {kind: catalogs[(kind, revision)].dumps() for kind in _kinds(revision)}
    assert len(texts) >= 2
    for kind, text in texts.items():
        assert text == texts["inprocess"], f"{kind} differs from in-process at revision {revision}"


def test_the_catalog_holds_everything_the_demo_advertises(catalogs: dict[Any, Catalog]) -> None:
    cat = catalogs[("inprocess", None)]
    # MCP 2025-11-25 server/tools, server/prompts, server/resources: each declared capability is listed
    assert {"tools", "prompts", "resources"} <= set(cat.capabilities)
    assert len(cat.tools) >= 5 and len(cat.prompts) >= 1 and len(cat.resources) >= 2
    assert cat.server.get("name") and cat.server.get("version")
    names = [tool["name"] for tool in cat.tools]
    assert names == sorted(names) and len(set(names)) == len(names)
    # MCP 2025-11-25 server/tools: inputSchema is a JSON Schema object with "type": "object"
    assert all(tool["inputSchema"].get("type") == "object" for tool in cat.tools)
    assert any(t.output_schema is not None for t in cat.tool_list()), "the demo has tools with an outputSchema"
    assert any(t.destructive for t in cat.tool_list()), "the demo has a tool annotated as destructive"


def test_handshake_and_modern_catalogs_list_the_same_tools(catalogs: dict[Any, Catalog]) -> None:
    modern, handshake = catalogs[("inprocess", None)], catalogs[("inprocess", "2025-11-25")]
    assert modern.tools == handshake.tools
    assert modern.prompts == handshake.prompts


# -- canonical form --------------------------------------------------------------------------------
def _sample(tools: list[dict[str, Any]]) -> Catalog:
    return Catalog(revision="2025-11-25", era="handshake", server={"name": "s", "version": "1"}, tools=tools)


TOOL_A = {"name": "alpha", "inputSchema": {"type": "object", "properties": {"n": {"type": "number", "maximum": 1.0, "minimum": 0.5}}}}
TOOL_B = {"name": "beta", "inputSchema": {"type": "object"}, "description": "b"}


def test_canonical_text_sorts_keys_and_ends_with_a_newline(catalogs: dict[Any, Catalog]) -> None:
    text = catalogs[("inprocess", None)].dumps()
    assert text.endswith("}\n") and not text.endswith("\n\n")
    data = json.loads(text)
    assert data["format"] == CATALOG_FORMAT
    # sorted keys at every depth: re-encoding with sort_keys changes nothing (common practice for stable diffs)
    assert json.dumps(data, sort_keys=True, indent=2, ensure_ascii=False) + "\n" == text


def test_whole_floats_are_written_as_integers() -> None:
    text = _sample([TOOL_A]).dumps()
    # JSON Schema 2020-12 Core 4.2.2: 1.0 and 1 are equal numbers; the canonical form keeps one spelling
    assert '"maximum": 1\n' in text or '"maximum": 1,' in text
    assert "1.0" not in text
    assert '"minimum": 0.5' in text


def test_order_of_capture_does_not_change_the_text() -> None:
    assert _sample([TOOL_A, TOOL_B]).dumps() == _sample([TOOL_B, TOOL_A]).dumps()
    reordered = dict(reversed(list(TOOL_B.items())))
    assert _sample([TOOL_A, reordered]).dumps() == _sample([TOOL_A, TOOL_B]).dumps()


def test_the_canonical_text_round_trips(catalogs: dict[Any, Catalog]) -> None:
    for cat in catalogs.values():
        text = cat.dumps()
        assert Catalog.loads(text, source="x.json").dumps() == text


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("{not json", "not valid JSON"),
        ('{"format": "other/9", "protocolVersion": "2025-11-25", "era": "handshake"}', "format"),
        (f'{{"format": "{CATALOG_FORMAT}", "protocolVersion": 5, "era": "handshake"}}', "protocolVersion"),
        ("[]", "JSON object"),
    ],
)
def test_a_broken_catalog_file_is_one_clear_line(text: str, fragment: str) -> None:
    with pytest.raises(UsageError) as caught:
        Catalog.loads(text, source="base/cat.json")
    message = str(caught.value)
    assert "\n" not in message and "base/cat.json" in message and fragment in message
