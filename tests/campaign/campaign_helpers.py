"""The fast campaign target: tests/servers/several_tools_one_flaw.py (stdlib wire loop, five tools)."""

from __future__ import annotations

import sys
from pathlib import Path

from feeler.target import Target

SERVER = Path(__file__).resolve().parents[1] / "servers" / "several_tools_one_flaw.py"
TOOLS = ("alpha", "bravo", "charlie", "delta", "echo")


def several_target() -> Target:
    return Target(kind="stdio", command=(sys.executable, str(SERVER)))
