"""The stop flag and its signal handlers, and errors from worker processes."""

from __future__ import annotations

import os
import signal
import time

import pytest
from posterior.problems import PRIOR, WalledLikelihood, two_feature_likelihood

import bayesirl as bi
from bayesirl.execution import interrupt
from bayesirl.execution.backend import Processes
from bayesirl.execution.interrupt import Guarded, Stopper, StopRequested


def _deliver(signum: int) -> None:
    """Signal this process and give Python the chance to run the handler."""
    os.kill(os.getpid(), signum)
    for _ in range(100):
        time.sleep(0.001)


def test_signals_set_the_flag_and_handlers_come_back():
    before = signal.getsignal(signal.SIGINT), signal.getsignal(signal.SIGTERM)
    with Stopper() as stopper:
        assert not stopper.stopped
        _deliver(signal.SIGTERM)
        assert stopper.stopped and stopper.signum == signal.SIGTERM
        _deliver(signal.SIGINT)  # within FORCE_AFTER of the first: still graceful
        assert stopper.signum == signal.SIGTERM  # the first signal is the one reported
    assert (signal.getsignal(signal.SIGINT), signal.getsignal(signal.SIGTERM)) == before


def test_a_late_second_ctrl_c_aborts(monkeypatch):
    monkeypatch.setattr(interrupt, "FORCE_AFTER", 0.0)
    with Stopper() as stopper:
        _deliver(signal.SIGINT)
        assert stopper.stopped
        with pytest.raises(KeyboardInterrupt):
            _deliver(signal.SIGINT)


def test_guarded_density_raises_once_stopped():
    stopper = Stopper()
    guard = Guarded(lambda x: 2 * x, stopper, stop_at_call=3)
    assert guard(1) == 2 and guard(2) == 4
    with pytest.raises(StopRequested):
        guard(3)  # the hook acts as a signal arriving at the third call
    assert stopper.signum == signal.SIGINT


@pytest.mark.parametrize("processes", [1, 2])
def test_errors_in_chains_reach_the_caller(processes):
    # A wall below every initial point: no finite start exists, and the chain raises.
    hopeless = WalledLikelihood(two_feature_likelihood(), cut=-100.0)
    start = time.monotonic()
    with pytest.raises(bi.InputError, match="no finite log-posterior"):
        bi.sample(hopeless, PRIOR, chains=2, draws=5, warmup=5, progress=False,
                  backend=Processes(processes))
    assert time.monotonic() - start < 30  # and nothing hangs waiting for the workers
