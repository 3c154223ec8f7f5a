"""Two campaign workers share hypothesis' own Redis example database (``hypothesis.extra.redis``) on a
real ``redis-server`` (Debian package) on 127.0.0.1: a failing example one worker found is retried first
by the other.

The server comes from ``$FEELER_TEST_REDIS_URL`` (``.ci/run`` starts one and stops it by pid), or this
module starts ``redis-server`` itself on a free loopback port and ends it by pid; without either the
tests skip with the reason. References: hypothesis docs, "The Hypothesis example database" (Phase.reuse
replays saved failing examples first); Redis ``PING`` answers ``PONG`` (Redis command reference).
"""

from __future__ import annotations

import contextlib
import os
import shutil
import signal
import subprocess
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from feeler.campaign import open_example_db
from feeler.check.runner import RunOptions, Runner
from feeler.target import Target

redis = pytest.importorskip("redis", reason="the redis package is not installed (pip install 'feeler[redis]')")
#: a bounded wait for redis-server to answer PING (it starts in milliseconds; from memory)
REDIS_START_TIMEOUT = 15.0


@pytest.fixture(scope="module")
def redis_url(tmp_path_factory: pytest.TempPathFactory, suite: Any) -> Iterator[str]:
    given = os.environ.get("FEELER_TEST_REDIS_URL")
    if given:
        try:
            redis.Redis.from_url(given).ping()
        except redis.RedisError as exc:
            pytest.skip(f"FEELER_TEST_REDIS_URL={given!r} does not answer PING: {exc}")
        yield given
        return
    binary = shutil.which("redis-server")
    if binary is None:
        pytest.skip("redis-server not installed (Debian package redis-server; .ci/run installs and starts it)")
    port = suite.free_port()
    folder = tmp_path_factory.mktemp("redis")
    argv = [binary, "--port", str(port), "--bind", "127.0.0.1", "--save", "", "--appendonly", "no", "--dir", str(folder)]
    proc = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True)
    url = f"redis://127.0.0.1:{port}/0"
    try:
        client = redis.Redis.from_url(url)
        deadline = time.monotonic() + REDIS_START_TIMEOUT
        while True:
            try:
                if client.ping():
                    break
            except redis.RedisError:
                if time.monotonic() > deadline or proc.poll() is not None:
                    pytest.skip(f"redis-server did not start on 127.0.0.1:{port}")
                time.sleep(0.05)
        client.close()
        yield url
    finally:
        for sig in (signal.SIGTERM, signal.SIGKILL):
            with contextlib.suppress(ProcessLookupError):
                os.killpg(proc.pid, sig)
            with contextlib.suppress(subprocess.TimeoutExpired):
                proc.wait(5)
                break


def _charlie_errors(target: Target, db: object, tmp: Path, *, samples: int, seed: int) -> set[str]:
    runner = Runner(target, RunOptions(samples=samples, sample_seed=seed, include=["charlie"], probes=False,
                                       replay_dir=str(tmp), example_db=db))  # fmt: skip
    report = runner.run()
    return {f.error_class for f in report.findings if f.tool == "charlie" and f.kind == "go" and f.severity == "error"}


def test_workers_share_failing_examples(redis_url: str, several: Target, tmp_path: Path) -> None:
    client = redis.Redis.from_url(redis_url)
    client.flushdb()
    # Worker A draws enough go cases to meet charlie's flaw (n ending in 7) and stores the failing example.
    found_a = _charlie_errors(several, open_example_db(redis_url), tmp_path / "a", samples=200, seed=1)
    assert found_a, "worker A did not meet the flaw"
    assert client.keys(b"feeler-examples:*")
    # Control: a worker without the database, with one drawn case, does not meet it by chance.
    assert _charlie_errors(several, None, tmp_path / "c", samples=1, seed=2) == set()
    # Worker B (another server process, another seed, one drawn case) retries A's example first.
    found_b = _charlie_errors(several, open_example_db(redis_url), tmp_path / "b", samples=1, seed=2)
    assert found_b & found_a
    client.flushdb()
    client.close()
