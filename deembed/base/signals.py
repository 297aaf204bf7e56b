"""Termination signals as exceptions, so that an interrupted run cleans up like a failed one.

Python turns SIGINT (Ctrl-C) into KeyboardInterrupt, but SIGTERM (``kill``, a scheduler's stop) and
SIGHUP (a closed terminal) end the process on the spot, leaving temporary files and half a set of
outputs. Inside :func:`signals_raise` each of them raises :class:`Interrupted` instead, which unwinds
through every ``with`` block (the output transaction removes its temporary folder), and the command
line exits with status 128 + the signal number (130 for SIGINT, 143 for SIGTERM, 129 for SIGHUP).
:func:`signals_held` defers the three signals over a few renames that must not be cut in half.
"""
from __future__ import annotations

import contextlib
import signal
import threading

_SIGNALS = tuple(getattr(signal, n) for n in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, n))


class Interrupted(BaseException):
    """The run was stopped by a signal (a BaseException, like KeyboardInterrupt, so no ``except
    Exception`` swallows it)."""

    def __init__(self, signum: int):
        self.signum = int(signum)
        try:
            name = signal.Signals(signum).name
        except ValueError:  # pragma: no cover
            name = f"signal {signum}"
        self.signame = name
        super().__init__(f"stopped by {name}")

    @property
    def exit_status(self) -> int:
        return 128 + self.signum


def _raise(signum, frame):
    raise Interrupted(signum)


@contextlib.contextmanager
def signals_raise():
    """Within the block, SIGINT, SIGTERM and SIGHUP raise :class:`Interrupted` (main thread only;
    elsewhere the block runs unchanged). The previous handlers come back afterwards."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    old = {}
    try:
        for s in _SIGNALS:
            old[s] = signal.signal(s, _raise)
        yield
    finally:
        for s, h in old.items():
            signal.signal(s, h)


@contextlib.contextmanager
def signals_held():
    """Hold SIGINT, SIGTERM and SIGHUP back during the block; one that arrived is delivered after it."""
    if not hasattr(signal, "pthread_sigmask"):  # pragma: no cover - not a POSIX system
        yield
        return
    old = signal.pthread_sigmask(signal.SIG_BLOCK, _SIGNALS)
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, old)
