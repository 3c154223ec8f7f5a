"""Catalogs of two real third-party MCP servers (issue 2 acceptance): ``mcp-server-time`` from PyPI (a console
script installed by the test extra) and ``@modelcontextprotocol/server-everything`` from npm (installed by
.ci/run into third_party_servers/).

Outside references: MCP 2025-11-25 server/tools (tools/list), MCP 2026-07-28 basic/transports (a client
preferring 2026-07-28 falls back to the handshake when the server does not know server/discover).
"""

from __future__ import annotations

import os
import shutil
import sys
from pathlib import Path

import pytest

from feeler.connect import capture_catalog
from feeler.target import Target

pytestmark = pytest.mark.thirdparty

REPO = Path(__file__).resolve().parent.parent
EVERYTHING = REPO / "third_party_servers" / "node_modules" / ".bin" / "mcp-server-everything"


def _time_server() -> Target:
    found = shutil.which("mcp-server-time") or shutil.which("mcp-server-time", path=os.path.dirname(sys.executable))
    if found is None:
        pytest.skip("mcp-server-time is not installed: python -m pip install -e '.[test]'")
    return Target(kind="stdio", command=(found,))


@pytest.mark.parametrize("revision", [None, "2025-11-25"])
def test_mcp_server_time(revision: str | None) -> None:
    cat = capture_catalog(_time_server(), revision=revision, timeout=20, probe_timeout=5)
    names = {tool["name"] for tool in cat.tools}
    assert {"get_current_time", "convert_time"} <= names
    assert cat.era in ("stateless", "handshake")
    if revision is not None:
        assert (cat.revision, cat.era) == (revision, "handshake")
    # MCP 2025-11-25 server/tools: every inputSchema is an object schema
    assert all(tool["inputSchema"].get("type") == "object" for tool in cat.tools)


def test_server_everything() -> None:
    if shutil.which("node") is None:
        pytest.skip("Node.js is not installed: the npm server @modelcontextprotocol/server-everything needs it")
    if not EVERYTHING.exists():
        pytest.skip(f"{EVERYTHING} is missing: run .ci/run (npm install --prefix third_party_servers ...)")
    target = Target(kind="stdio", command=(str(EVERYTHING), "stdio"), env={"GZIP_ALLOWED_DOMAINS": "127.0.0.1"})
    cat = capture_catalog(target, timeout=20, probe_timeout=5)
    assert len(cat.tools) >= 5
    assert "echo" in {tool["name"] for tool in cat.tools}
    assert cat.prompts and cat.resources  # it advertises all three features
    assert cat.server.get("name")
