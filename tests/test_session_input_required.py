"""2026-07-28 input-required results are recorded, and the checks do not mistake them for acceptance."""

from __future__ import annotations

import sys
from pathlib import Path

from feeler.check.registry import CHECKS, CallContext, CheckSettings
from feeler.connect import connected
from feeler.target import Target

SERVER = Path(__file__).resolve().parent / "servers" / "input_required.py"


def test_input_required_result_is_recorded_and_not_judged_as_success() -> None:
    target = Target(kind="stdio", command=(sys.executable, str(SERVER)))
    with connected(target, timeout=5.0) as session:
        assert session.era == "stateless"
        ex = session.call_tool("echo", {"text": 5})  # a no-go case (text must be a string)
        # MCP 2026-07-28 basic/patterns/mrtr: resultType "input_required" with inputRequests/requestState.
        assert ex.input_required
        assert list(session.log.input_required) == [ex]
        assert ex.result["requestState"] == "opaque-state-1"
        ctx = CallContext("no-go", None, str(session.revision), "stateless", CheckSettings(), exchange=ex)
        # Asking for input is not accepting the arguments: nogo_stops stays silent (nothing was run yet).
        assert CHECKS["nogo_stops"].run(ctx) == []
