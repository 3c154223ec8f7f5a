"""Per-call overhead of feeler's Session.call_tool, side by side with a raw client and the official SDK client.

Run by hand: ``python bench/bench_overhead.py [--calls N] [--rounds R] [--profile]``.

All three clients call the ``echo`` tool of the same minimal stdio server (bench/echo_server.py, one fresh
process per client and round) N times, one call at a time, after the handshake (not timed):

(a) raw: a newline-JSON client written here (write one line, read one line);
(b) feeler: ``feeler.session.Session`` over ``StdioTransport`` (``Session.call_tool``);
(c) SDK: the official ``mcp`` client (``mcp.client.stdio.stdio_client`` + ``ClientSession.call_tool``).

Rounds interleave the clients so drift hits all of them alike; the best round of each is reported
(common practice for micro-benchmarks: the minimum is the least disturbed). Goals (issue 4):
feeler/raw >= 0.7 and feeler/SDK >= 2.
"""

from __future__ import annotations

import argparse
import asyncio
import json
import os
import platform
import signal
import subprocess
import sys
import time
from importlib.metadata import version
from pathlib import Path

SERVER = [sys.executable, str(Path(__file__).resolve().parent / "echo_server.py")]
ARGS = {"text": "hello"}


def bench_raw(calls: int) -> float:
    """Calls per second of a bare newline-JSON client."""
    proc = subprocess.Popen(SERVER, stdin=subprocess.PIPE, stdout=subprocess.PIPE, start_new_session=True)
    try:
        assert proc.stdin is not None and proc.stdout is not None
        w, r = proc.stdin, proc.stdout

        def rpc(rid: int, method: str, params: dict | None = None) -> dict:
            msg = {"jsonrpc": "2.0", "id": rid, "method": method}
            if params is not None:
                msg["params"] = params
            w.write(json.dumps(msg).encode() + b"\n")
            w.flush()
            return json.loads(r.readline())

        rpc(0, "initialize", {"protocolVersion": "2025-11-25", "capabilities": {}, "clientInfo": {"name": "raw", "version": "0"}})
        w.write(b'{"jsonrpc":"2.0","method":"notifications/initialized"}\n')
        w.flush()
        start = time.perf_counter()
        for i in range(1, calls + 1):
            reply = rpc(i, "tools/call", {"name": "echo", "arguments": ARGS})
            assert reply["id"] == i
        return calls / (time.perf_counter() - start)
    finally:
        _end(proc)


def _end(proc: subprocess.Popen) -> None:
    try:
        os.killpg(proc.pid, signal.SIGTERM)
    except ProcessLookupError:
        pass
    proc.wait(timeout=5)


def bench_feeler(calls: int) -> float:
    """Calls per second of feeler's Session.call_tool over StdioTransport."""
    from feeler.session import Session
    from feeler.transport.stdio import StdioTransport

    session = Session(StdioTransport("bench", tuple(SERVER)), revision="2025-11-25", request_timeout=30.0)
    session.open()
    try:
        start = time.perf_counter()
        for _ in range(calls):
            ex = session.call_tool("echo", ARGS)
            assert ex.result is not None
        return calls / (time.perf_counter() - start)
    finally:
        session.close()


def bench_sdk(calls: int) -> float:
    """Calls per second of the official SDK client (stdio_client + ClientSession)."""
    from mcp.client.session import ClientSession
    from mcp.client.stdio import StdioServerParameters, stdio_client

    async def go() -> float:
        params = StdioServerParameters(command=SERVER[0], args=SERVER[1:])
        async with stdio_client(params) as (read, write), ClientSession(read, write) as session:
            await session.initialize()
            start = time.perf_counter()
            for _ in range(calls):
                result = await session.call_tool("echo", ARGS)
                assert not result.is_error
            return calls / (time.perf_counter() - start)

    return asyncio.run(go())


CLIENTS = {"raw": bench_raw, "feeler": bench_feeler, "sdk": bench_sdk}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--calls", type=int, default=2000)
    parser.add_argument("--rounds", type=int, default=3)
    parser.add_argument("--profile", action="store_true", help="cProfile feeler's calls and print the top functions")
    options = parser.parse_args()
    best: dict[str, float] = {}
    for round_no in range(options.rounds):
        for name, func in CLIENTS.items():
            rate = func(options.calls)
            best[name] = max(best.get(name, 0.0), rate)
            print(f"round {round_no + 1}: {name:6s} {rate:9.0f} calls/s", flush=True)
    print(
        f"\n{time.strftime('%Y-%m-%d')}, Python {platform.python_version()}, {os.cpu_count()} CPUs, {platform.machine()}, "
        f"feeler {version('feeler')}, mcp {version('mcp')}; {options.calls} calls x {options.rounds} rounds (best round)"
    )
    for name in CLIENTS:
        print(f"  {name:6s} {best[name]:9.0f} calls/s  ({1e6 / best[name]:6.1f} us/call)")
    print(f"  feeler/raw = {best['feeler'] / best['raw']:.2f}  (goal >= 0.7)")
    print(f"  feeler/SDK = {best['feeler'] / best['sdk']:.2f}  (goal >= 2)")
    print(f"  raw/SDK    = {best['raw'] / best['sdk']:.2f}")
    if options.profile:
        import cProfile
        import pstats

        profiler = cProfile.Profile()
        profiler.enable()
        bench_feeler(options.calls)
        profiler.disable()
        pstats.Stats(profiler).sort_stats("tottime").print_stats(15)


if __name__ == "__main__":
    main()
