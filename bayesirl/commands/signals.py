"""Signals around a command: SIGTERM stops like Ctrl-C, and short critical sections hold both.

While :func:`bayesirl.sample` runs it installs its own handlers (which also stop its worker
processes) and puts these back when it returns. Outside sampling a SIGINT or SIGTERM raises
``KeyboardInterrupt``, except inside :func:`held`, where it is only remembered, for the caller
to act on when the section ends: the few file writes and renames that move a sampled run into
place are never cut in half, so a finished run cannot be lost to a badly timed signal.
"""

from __future__ import annotations

import os
import signal
import sys
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager

STOPS = (signal.SIGINT, signal.SIGTERM)


def _main_thread() -> bool:
    return threading.current_thread() is threading.main_thread()


class _Pending:
    """A stop signal our handler saw, until the command has acted on it.

    A ``KeyboardInterrupt`` raised inside a callback from C (numba's compiler and cache
    loader call back into Python) is printed as "ignored" and lost: the run would go on as
    if Ctrl-C had never been pressed. So the handler also notes the signal, and a watcher
    thread sends it again until the command acknowledges it: to our handler while it is
    still installed, and once to a handler installed since (``bayesirl.sample``'s, which
    then stops the chains gracefully).
    """

    def __init__(self) -> None:
        self.signum: int | None = None
        self.lock = threading.Lock()
        self.thread: threading.Thread | None = None

    def note(self, signum: int) -> None:
        with self.lock:
            self.signum = signum
            if self.thread is None or not self.thread.is_alive():
                self.thread = threading.Thread(target=self._watch, daemon=True,
                                               name="bayesirl-signal-watch")
                self.thread.start()

    def acknowledge(self) -> None:
        with self.lock:
            self.signum = None

    def _watch(self) -> None:
        told = set()
        while True:
            time.sleep(RESEND_AFTER)
            with self.lock:
                signum = self.signum
                if signum is None:
                    return
                handler = signal.getsignal(signum)
                if getattr(handler, "holds_signals", False):
                    continue  # a held section will act on it when it ends
                if handler is not _raise and id(handler) in told:
                    continue
                if handler is not _raise:
                    told.add(id(handler))
            os.kill(os.getpid(), signum)


RESEND_AFTER = 0.5  # seconds
PENDING = _Pending()


def acknowledge() -> None:
    """The command has acted on the stop signal: stop sending it again."""
    PENDING.acknowledge()


def _raise(signum, frame):
    PENDING.note(signum)
    raise KeyboardInterrupt


def _quiet_unraisable(previous):
    def hook(unraisable):
        if not issubclass(unraisable.exc_type, KeyboardInterrupt):
            previous(unraisable)
    return hook


@contextmanager
def stop_on_signals() -> Iterator[None]:
    """SIGINT and SIGTERM (what ``kill`` sends) raise ``KeyboardInterrupt``, never lost."""
    if not _main_thread():
        yield
        return
    previous = {s: signal.signal(s, _raise) for s in STOPS}
    hook = sys.unraisablehook
    sys.unraisablehook = _quiet_unraisable(hook)  # the lost one is sent again
    try:
        yield
    finally:
        acknowledge()
        sys.unraisablehook = hook
        for s, handler in previous.items():
            signal.signal(s, handler)


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

    remember.holds_signals = True

    previous = {s: signal.signal(s, remember) for s in STOPS}
    try:
        yield received
    finally:
        for s, handler in previous.items():
            signal.signal(s, handler)
