"""A Ctrl-C that Python loses inside a callback from C is sent again until it is acted on.

numba calls back into Python from C while it loads compiled code; a ``KeyboardInterrupt``
raised there is printed as "ignored" and lost. A ``ctypes`` callback reproduces that here:
the signal arrives while the callback runs, is lost, and the watcher of
``bayesirl.commands.signals`` must deliver it again to the Python code that follows.
"""

from __future__ import annotations

import ctypes
import os
import signal
import threading
import time

import pytest

from bayesirl.commands import signals

CALLBACK = ctypes.CFUNCTYPE(None)


def _lose_a_sigint() -> None:
    """Run a C callback during which SIGINT arrives (and is swallowed by ctypes)."""
    sent = threading.Event()

    def send():
        os.kill(os.getpid(), signal.SIGINT)
        sent.set()

    def inside():  # sends the signal and returns only once it is out, however loaded
        threading.Thread(target=send).start()
        sent.wait(30)
        time.sleep(0.1)

    CALLBACK(inside)()


def _seconds_until_interrupted(limit: float) -> float | None:
    t0 = time.monotonic()
    try:
        while time.monotonic() - t0 < limit:
            time.sleep(0.01)
    except KeyboardInterrupt:
        return time.monotonic() - t0
    return None


def test_a_sigint_lost_in_a_c_callback_is_delivered_again():
    with signals.stop_on_signals():
        _lose_a_sigint()
        waited = _seconds_until_interrupted(3.0)
        signals.acknowledge()
    # The watcher sends again every RESEND_AFTER = 0.5 s; 3 s leaves room for a loaded machine.
    assert waited is not None and waited < 3.0


def test_without_the_watcher_the_sigint_is_lost(monkeypatch):
    # Negative control: the same sequence with nothing noting the signal loses it for good.
    monkeypatch.setattr(signals.PENDING, "note", lambda signum: None)
    with signals.stop_on_signals():
        _lose_a_sigint()
        waited = _seconds_until_interrupted(1.5)
    assert waited is None


def test_a_held_section_keeps_the_signal_for_its_end():
    with signals.stop_on_signals():
        with signals.held() as late:
            os.kill(os.getpid(), signal.SIGTERM)
            time.sleep(0.2)  # nothing is raised inside
        assert late == [signal.SIGTERM]
        with pytest.raises(KeyboardInterrupt):  # outside, a signal stops as Ctrl-C does
            os.kill(os.getpid(), signal.SIGTERM)
            time.sleep(1.0)
        signals.acknowledge()
