"""Interruptions: SIGTERM and SIGHUP end a run the way Ctrl-C (SIGINT) does, as an exception, so
every ``finally`` and clean-up runs; and a short critical step can hold all three back.

Signal handlers can only be set in the main thread; elsewhere both context managers do nothing.
"""

from __future__ import annotations

import signal
import threading
from collections.abc import Iterator
from contextlib import contextmanager

__all__ = ["Terminated", "exit_status", "signals_as_exceptions", "signals_deferred"]

#: signals that ask a program to stop, besides SIGINT (SIGHUP: the terminal was closed)
_STOP_SIGNALS = tuple(getattr(signal, name) for name in ("SIGTERM", "SIGHUP") if hasattr(signal, name))


class Terminated(KeyboardInterrupt):
    """Raised in the main thread when SIGTERM or SIGHUP arrives; ``signum`` names which."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum


def exit_status(exc: KeyboardInterrupt) -> int:
    """The shell's status for a run ended by a signal: 128 + its number (130 for Ctrl-C)."""
    return 128 + (exc.signum if isinstance(exc, Terminated) else signal.SIGINT)


def _in_main_thread() -> bool:
    return threading.current_thread() is threading.main_thread()


def _raise_terminated(signum: int, frame: object) -> None:
    raise Terminated(signum)


@contextmanager
def signals_as_exceptions() -> Iterator[None]:
    """While active, SIGTERM and SIGHUP raise :class:`Terminated` (SIGINT raises
    KeyboardInterrupt as Python's default handler does); the earlier handlers come back after."""
    if not _in_main_thread():
        yield
        return
    previous = {s: signal.signal(s, _raise_terminated) for s in _STOP_SIGNALS}
    try:
        yield
    finally:
        for s, handler in previous.items():
            signal.signal(s, handler)


@contextmanager
def signals_deferred() -> Iterator[None]:
    """Hold SIGINT, SIGTERM and SIGHUP back while the block runs; the first that arrived is
    delivered to the earlier handler when the block ends."""
    if not _in_main_thread():
        yield
        return
    pending: list[int] = []
    stops = (signal.SIGINT, *_STOP_SIGNALS)
    previous = {s: signal.signal(s, lambda n, frame: pending.append(n)) for s in stops}
    try:
        yield
    finally:
        for s, handler in previous.items():
            signal.signal(s, handler)
        if pending:
            signal.raise_signal(pending[0])
