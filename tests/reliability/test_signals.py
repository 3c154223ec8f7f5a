"""A stop signal inside :func:`feeler._signals.held` waits for the block's end.

Reference: Python docs, ``signal`` ("Python signal handlers are always executed in the main Python
thread"; a handler runs between bytecodes, so it can land anywhere, which is why bookkeeping that must
stay whole holds the signal). POSIX ``kill(2)``: a process may signal itself. The signal goes to this
test's own interpreter only while the handler is installed, and the previous handlers are restored.
"""

from __future__ import annotations

import os
import signal
import time

import pytest

from feeler import _signals


def _let_it_arrive() -> None:
    """A signal sent to oneself is handled at the main thread's next check: wait a bounded moment."""
    for _ in range(50):
        time.sleep(0.01)


@pytest.fixture()
def installed():
    before = {sig: signal.getsignal(sig) for sig in (signal.SIGINT, signal.SIGTERM, signal.SIGHUP)}
    for sig in before:
        signal.signal(sig, signal.default_int_handler if sig == signal.SIGINT else signal.SIG_DFL)
    _signals.install()
    try:
        yield
    finally:
        for sig, handler in before.items():
            signal.signal(sig, handler)


def test_a_signal_inside_held_is_raised_when_the_block_ends(installed: None) -> None:
    steps: list[str] = []
    with pytest.raises(_signals.Stopped) as caught:
        with _signals.held():
            os.kill(os.getpid(), signal.SIGTERM)
            _let_it_arrive()
            steps.append("counted")  # still runs: the stop waits
            steps.append("logged")
        steps.append("after")  # never: the stop is raised as the block ends
    assert steps == ["counted", "logged"]
    assert caught.value.exit_code == 128 + signal.SIGTERM


def test_the_held_signal_outranks_an_exception_leaving_the_block(installed: None) -> None:
    with pytest.raises(_signals.Stopped):
        with _signals.held():
            os.kill(os.getpid(), signal.SIGTERM)
            _let_it_arrive()
            raise ValueError("the budget is spent")


def test_outside_held_the_signal_stops_at_once(installed: None) -> None:
    steps: list[str] = []
    with pytest.raises(_signals.Stopped):
        os.kill(os.getpid(), signal.SIGTERM)
        _let_it_arrive()
        steps.append("never")
    assert steps == []


def test_ctrl_c_is_held_too(installed: None) -> None:
    """SIGINT (Ctrl-C) waits like SIGTERM, and ends with the shell's 130 (128 + SIGINT; POSIX shells)."""
    steps: list[str] = []
    with pytest.raises(KeyboardInterrupt) as caught:
        with _signals.held():
            os.kill(os.getpid(), signal.SIGINT)
            _let_it_arrive()
            steps.append("counted")
    assert steps == ["counted"]
    assert isinstance(caught.value, _signals.Stopped) and caught.value.exit_code == 130


SWALLOWED = """
import gc, os, signal, sys, time
from feeler import _signals

_signals.install()
fired = []


def callback(phase, info):
    # The stop arrives while the garbage collector runs this callback: an exception raised here is
    # "Exception ignored" (Python docs, gc.callbacks and sys.unraisablehook).
    if phase == "start" and not fired:
        fired.append(1)
        os.kill(os.getpid(), signal.SIGTERM)
        total = 0
        for i in range(100000):  # the handler runs between these bytecodes, inside the callback
            total += i


gc.callbacks.append(callback)
try:
    gc.collect()
    for _ in range(100):  # bounded: 5 s at most
        time.sleep(0.05)
    print("went on")
    sys.exit(0)
except _signals.Stopped as exc:
    print("stopped", exc)
    sys.exit(exc.exit_code)
"""


def test_a_stop_swallowed_in_a_gc_callback_is_delivered_again() -> None:
    """A stop raised inside a garbage-collector callback is swallowed by Python; feeler's unraisable hook
    sends the signal again, so the run still ends with 128 + SIGTERM (and is not lost)."""
    import subprocess
    import sys

    proc = subprocess.run([sys.executable, "-c", SWALLOWED], capture_output=True, text=True, timeout=60)
    assert proc.returncode == 128 + signal.SIGTERM, (proc.stdout, proc.stderr)
    assert proc.stdout.strip() == "stopped SIGTERM" and "Exception ignored" not in proc.stderr
