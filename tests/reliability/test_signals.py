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
