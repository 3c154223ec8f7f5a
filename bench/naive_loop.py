"""The naive loop of issue 9: hypothesis-jsonschema ``from_schema`` + ``@given`` + raw newline-JSON calls.

Run by ``bench/run`` with the interpreter of its own virtual environment (hypothesis < 6.170.10: the
hypothesis-jsonschema 0.23.1 release breaks on newer hypothesis for object schemas), so it measures the
loop a user would write with those two libraries, not feeler. Prints one JSON line: cases/s.
Usage: ``python naive_loop.py EXAMPLES SERVER_COMMAND...``.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from echo_server import NESTED  # noqa: E402


def main() -> None:
    from hypothesis import HealthCheck, given, settings
    from hypothesis_jsonschema import from_schema

    examples, server = int(sys.argv[1]), sys.argv[2:]
    proc = subprocess.Popen(server, stdin=subprocess.PIPE, stdout=subprocess.PIPE, start_new_session=True)
    rid = 0

    def rpc(method: str, params: dict) -> dict:
        nonlocal rid
        rid += 1
        proc.stdin.write(json.dumps({"jsonrpc": "2.0", "id": rid, "method": method, "params": params}).encode() + b"\n")
        proc.stdin.flush()
        return json.loads(proc.stdout.readline())

    try:
        rpc("initialize", {"protocolVersion": "2025-11-25", "capabilities": {}, "clientInfo": {"name": "naive", "version": "0"}})
        proc.stdin.write(b'{"jsonrpc":"2.0","method":"notifications/initialized"}\n')
        proc.stdin.flush()
        calls = 0

        @settings(max_examples=examples, deadline=None, database=None, suppress_health_check=list(HealthCheck))
        @given(from_schema(NESTED["inputSchema"]))
        def prop(args: dict) -> None:
            nonlocal calls
            calls += 1
            assert "result" in rpc("tools/call", {"name": "order", "arguments": args})

        start = time.perf_counter()
        prop()
        spent = time.perf_counter() - start
        import hypothesis
        import hypothesis_jsonschema

        print(json.dumps({"cases": calls, "seconds": spent, "casesPerSecond": calls / spent,
                          "hypothesis": hypothesis.__version__, "hypothesisJsonschema": hypothesis_jsonschema.__version__}))
    finally:
        os.killpg(proc.pid, signal.SIGTERM)
        proc.wait(10)


if __name__ == "__main__":
    main()
