"""Signals around a command: SIGTERM stops like Ctrl-C, and short critical sections hold both.

While :func:`bayesirl.sample` runs it installs its own handlers (which also stop its worker
processes) and puts these back when it returns. Outside sampling a SIGINT or SIGTERM raises
``KeyboardInterrupt``, except inside :func:`held`, where it is only remembered, for the caller
to act on when the section ends: the few file writes and renames that move a sampled run into
place are never cut in half, so a finished run cannot be lost to a badly timed signal.
"""

from __future__ import annotations

import signal
import threading
from collections.abc import Iterator
from contextlib import contextmanager

STOPS = (signal.SIGINT, signal.SIGTERM)


def _main_thread() -> bool:
    return threading.current_thread() is threading.main_thread()


def _raise(signum, frame):
    raise KeyboardInterrupt


@contextmanager
def stop_on_signals() -> Iterator[None]:
    """SIGTERM (what ``kill`` sends) raises ``KeyboardInterrupt`` just as SIGINT does."""
    if not _main_thread():
        yield
        return
    previous = signal.signal(signal.SIGTERM, _raise)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


@contextmanager
def held() -> Iterator[list]:
    """Hold SIGINT and SIGTERM during the block: yields the list of those that arrived.

    The caller checks the list after the block and stops as the signal asked.
    """
    received: list[int] = []
    if not _main_thread():
        yield received
        return

    def remember(signum, frame):
        received.append(signum)

    previous = {s: signal.signal(s, remember) for s in STOPS}
    try:
        yield received
    finally:
        for s, handler in previous.items():
            signal.signal(s, handler)
