"""SIGINT, SIGTERM and SIGHUP end feeler by unwinding, so every server it started is ended.

Python's default for SIGTERM and SIGHUP is to die at once, skipping ``finally`` blocks and ``atexit``
(Python docs, ``signal``: "SIGTERM ... default action"; POSIX: the default action terminates the
process), which would leave stdio servers orphaned. :func:`install` replaces that default (and
Python's own SIGINT handler, which raises KeyboardInterrupt wherever the program is) with a handler
raising :class:`Stopped`, a :class:`KeyboardInterrupt`, so the CLI and pytest shut down as after Ctrl-C;
the exit code is ``128 + signal`` (130 for SIGINT, 143 for SIGTERM, 129 for SIGHUP). A handler someone
else installed is left alone. Further signals are ignored while the first one is being handled, so the
bounded shutdown of the servers is not cut short.

Bookkeeping that must not be cut in half (a call counted but not yet written to the call log) runs
inside :func:`held`: a stop signal arriving there is kept and raised when the block ends.

A handler's exception that lands where Python cannot raise it (a garbage-collector callback, a
``__del__``: Python prints "Exception ignored in ..." and goes on) would be lost, and with the later
signals ignored the run would go on to its end. :func:`install` therefore also wraps
``sys.unraisablehook``: a swallowed :class:`Stopped` re-arms its handler and sends the signal again
shortly, so the stop is delivered where it can unwind.
"""

from __future__ import annotations

import os
import signal
import sys
import threading
from typing import Any

__all__ = ["Stopped", "held", "install"]

_SIGNALS = tuple(getattr(signal, name) for name in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, name))


class Stopped(KeyboardInterrupt):
    """feeler was asked to stop by *signum*; the exit code is ``128 + signum`` (shell convention)."""

    def __init__(self, signum: int) -> None:
        super().__init__(signal.Signals(signum).name)
        self.signum = signum

    @property
    def exit_code(self) -> int:
        return 128 + self.signum

    @property
    def said(self) -> str:
        """How feeler tells it: ``interrupted`` for Ctrl-C, ``stopped by SIGTERM`` for the others."""
        return "interrupted" if self.signum == getattr(signal, "SIGINT", None) else f"stopped by {self}"


_holding = 0  # depth of held() blocks on the main thread (handlers run only there)
_pending: int | None = None


def _handler(signum: int, frame: Any) -> None:
    global _pending
    for sig in _SIGNALS:
        signal.signal(sig, signal.SIG_IGN)  # one stop at a time: let the shutdown finish
    if _holding:
        _pending = signum
        return
    raise Stopped(signum)


class _Held:
    """What :func:`held` returns: a plain class rather than a generator-based context manager, since it is
    entered once per call on the sampled-case loop (no state of its own: the depth is module-wide)."""

    __slots__ = ()

    def __enter__(self) -> None:
        global _holding
        if threading.get_ident() == _MAIN:
            _holding += 1

    def __exit__(self, *exc: object) -> bool:
        global _holding, _pending
        if threading.get_ident() != _MAIN:
            return False
        _holding -= 1
        if not _holding and _pending is not None:  # the stop outranks whatever else ends the block
            signum, _pending = _pending, None
            raise Stopped(signum)
        return False


_MAIN = threading.main_thread().ident
_HELD = _Held()


def held() -> _Held:
    """Keep a SIGINT/SIGTERM/SIGHUP that arrives inside the block and raise it (as :class:`Stopped`) at its end.

    For short bookkeeping only (counting a finished call and logging it): the block is not interrupted
    halfway, so counts and logs agree. Outside the main thread it does nothing (no handler runs there).
    """
    return _HELD


#: how long after a swallowed stop the signal is sent again (the swallowing callback has returned by then)
REDELIVER_AFTER = 0.05


def _unraisable(unraisable: Any) -> None:
    """``sys.unraisablehook``: a :class:`Stopped` Python had to swallow is delivered again; the rest goes to
    the hook that was there before."""
    exc = unraisable.exc_value
    if isinstance(exc, Stopped):
        signal.signal(exc.signum, _handler)  # re-armed for this one signal; the others stay ignored
        timer = threading.Timer(REDELIVER_AFTER, os.kill, (os.getpid(), exc.signum))
        timer.daemon = True
        timer.start()
        return
    _previous_hook(unraisable)


_previous_hook: Any = sys.unraisablehook


def install() -> list[int]:
    """Install the handler for SIGINT, SIGTERM and SIGHUP where Python's default is still set (for
    SIGINT: ``signal.default_int_handler``).

    Returns the signals it took over (none outside the main thread, where Python allows no handlers).
    """
    global _previous_hook
    if threading.current_thread() is not threading.main_thread():
        return []
    if sys.unraisablehook is not _unraisable:
        _previous_hook, sys.unraisablehook = sys.unraisablehook, _unraisable
    taken = []
    for sig in _SIGNALS:
        if signal.getsignal(sig) in (signal.SIG_DFL, None, signal.default_int_handler) or signal.getsignal(sig) is _handler:
            signal.signal(sig, _handler)
            taken.append(sig)
    return taken
