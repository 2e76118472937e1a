"""Stopping a run on SIGINT or SIGTERM: a flag set by the handler, checked at every evaluation.

The handler only records the signal; the sampler sees it at the next log-density call
(:class:`Guarded` raises :class:`StopRequested`), rolls the unfinished iteration back and
stops, so a run stops within one density evaluation. Forked workers inherit the handler and
their own copy of the flag: a Ctrl-C at a terminal reaches every process of the group, and
the parent forwards SIGTERM, which reaches only it, to its workers. A worker whose parent
has gone (killed outright) stops too, so it cannot be left running as an orphan.
"""

from __future__ import annotations

import os
import signal
import threading
import time
from collections.abc import Callable
from typing import Any, NamedTuple

SIGNALS = (signal.SIGINT, signal.SIGTERM)
FORCE_AFTER = 1.0  # seconds after a first Ctrl-C from which a second one aborts at once


class StopRequested(Exception):
    """Raised inside a log-density call when the run is to stop (never escapes sample)."""


class StopHook(NamedTuple):
    """Internal hook for tests: act as if a signal arrived in chain ``chain`` after
    ``iteration`` completed iterations or at its ``evaluation``-th density call."""

    chain: int
    iteration: int | None = None
    evaluation: int | None = None


class Stopper:
    """Installs the signal handlers (main thread only) and holds the stop flag."""

    def __init__(self) -> None:
        self.signum: int | None = None
        self.requested = False
        self.parent = os.getpid()  # a worker compares its parent with this
        self._since = 0.0
        self._previous: dict[int, Any] = {}

    @property
    def stopped(self) -> bool:
        """A stop was requested, or this is a worker whose parent has died."""
        if self.requested:
            return True
        if os.getpid() != self.parent and os.getppid() != self.parent:
            self.request()
        return self.requested

    def request(self, signum: int | None = None) -> None:
        """Ask the run to stop (what the signal handler does)."""
        if self.signum is None:
            self.signum = signum
        if not self.requested:
            self._since = time.monotonic()
        self.requested = True

    def _handle(self, signum, frame) -> None:
        # A second Ctrl-C a while after the first means the graceful stop is stuck (one
        # very long density evaluation): abort in the main process. The checkpoint on disk
        # is then the last periodic one, never a half-written file. Quick double presses
        # still stop gracefully, and workers only ever set their flag.
        if (self.requested and signum == signal.SIGINT and os.getpid() == self.parent
                and time.monotonic() - self._since > FORCE_AFTER):
            raise KeyboardInterrupt
        self.request(signum)

    def install(self) -> bool:
        """Install the handlers; False (and nothing done) outside the main thread."""
        if threading.current_thread() is not threading.main_thread():
            return False
        for sig in SIGNALS:
            self._previous[sig] = signal.signal(sig, self._handle)
        return True

    def ensure_installed(self) -> None:
        """In a worker: a forked one inherited the handler already, a spawned one did not."""
        if getattr(signal.getsignal(signal.SIGINT), "__self__", None) is not self:
            self.install()

    def restore(self) -> None:
        """Put the previous handlers back."""
        for sig, handler in self._previous.items():
            # None: the previous handler was not set from Python; the default is closest.
            signal.signal(sig, signal.SIG_DFL if handler is None else handler)
        self._previous = {}

    def __enter__(self) -> Stopper:
        self.install()
        return self

    def __exit__(self, *exc) -> None:
        self.restore()


class Guarded:
    """The log density, raising :class:`StopRequested` once a stop is requested."""

    def __init__(self, fn: Callable, stopper: Stopper, stop_at_call: int | None = None) -> None:
        self.fn, self.stopper, self.stop_at_call, self.calls = fn, stopper, stop_at_call, 0

    def __call__(self, theta):
        self.calls += 1
        if self.calls == self.stop_at_call:
            self.stopper.request(signal.SIGINT)
        if self.stopper.stopped:
            raise StopRequested
        return self.fn(theta)
