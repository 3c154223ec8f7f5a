"""What learning values and call chains cost feeler's call loop, measured side by side in one run.

Run by hand: ``python bench/bench_world.py [--samples N] [--rounds R] [--chain-runs N]``.

The same fast server (bench/world_server.py, a fresh process per run) is checked by ``Runner.run()``
(probes off, no replay files) in two configurations, rounds interleaved:

* **off**: ``learn=False, chain_runs=0`` (the call loop as it was before learning);
* **on**: ``learn=True`` (discovery pass, every successful answer learned from, learned values offered)
  and ``chain_runs=N`` (the chain phase).

Reported per configuration (best round, common practice for micro-benchmarks): ``tools/call`` requests
per second over the whole run after the catalog is read; and, for "on", the share of the run's time
spent in the learning hooks (``World.after_call``: reading answers and filing values) and in the chain
machinery around the calls. Goal (issue 8): learning costs at most 15% of the call loop.
"""

from __future__ import annotations

import argparse
import platform
import sys
import time
from importlib.metadata import version
from pathlib import Path

from feeler.check.runner import RunOptions, Runner
from feeler.session import Session
from feeler.target import Target
from feeler.world.state import World

SERVER = Target(kind="stdio", command=(sys.executable, str(Path(__file__).resolve().parent / "world_server.py")))


class _Clock:
    """Counts tools/call requests and the time spent inside wrapped functions."""

    def __init__(self) -> None:
        self.calls = 0
        self.learning = 0.0

    def install(self) -> None:
        call_tool, after_call = Session.call_tool, World.after_call
        clock = self

        def counted(self, *args, **kwargs):  # type: ignore[no-untyped-def]
            clock.calls += 1
            return call_tool(self, *args, **kwargs)

        def timed(self, *args, **kwargs):  # type: ignore[no-untyped-def]
            start = time.perf_counter()
            try:
                return after_call(self, *args, **kwargs)
            finally:
                clock.learning += time.perf_counter() - start

        Session.call_tool = counted  # type: ignore[method-assign]
        World.after_call = timed  # type: ignore[method-assign]


CLOCK = _Clock()


def run(samples: int, *, learn: bool, chain_runs: int) -> tuple[float, int, float, int]:
    """calls/s, calls, learning share of the time, chain findings."""
    options = RunOptions(samples=samples, probes=False, replay_dir=None, learn=learn, chain_runs=chain_runs)
    runner = Runner(SERVER, options)
    runner.open()  # server start and catalog: not timed
    CLOCK.calls, CLOCK.learning = 0, 0.0
    start = time.perf_counter()
    report = runner.run()
    elapsed = time.perf_counter() - start
    chains = sum(1 for f in report.findings if f.kind == "chain")
    return CLOCK.calls / elapsed, CLOCK.calls, CLOCK.learning / elapsed, chains


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=50)
    parser.add_argument("--rounds", type=int, default=3)
    parser.add_argument("--chain-runs", type=int, default=20)
    args = parser.parse_args()
    CLOCK.install()
    best: dict[str, tuple[float, int, float, int]] = {}
    for _ in range(args.rounds):
        for name, learn, chains in (("off", False, 0), ("learning", True, 0), ("learning+chains", True, args.chain_runs)):
            result = run(args.samples, learn=learn, chain_runs=chains)
            if name not in best or result[0] > best[name][0]:
                best[name] = result
    print(f"{platform.machine()}, Python {platform.python_version()}, hypothesis {version('hypothesis')}, "
          f"{args.samples} samples per tool, {args.rounds} rounds (best), chain runs {args.chain_runs}")  # fmt: skip
    print(f"{'configuration':<18} {'calls/s':>9} {'calls':>7} {'learning share':>15} {'chain findings':>15}")
    for name, (rate, calls, share, chains) in best.items():
        print(f"{name:<18} {rate:>9.0f} {calls:>7} {share:>14.1%} {chains:>15}")
    off = best["off"][0]
    for name in ("learning", "learning+chains"):
        print(f"{name}/off calls/s ratio: {best[name][0] / off:.2f} (goal: learning costs at most 15%: >= 0.85)")


if __name__ == "__main__":
    main()
