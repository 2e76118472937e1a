"""Exact resume: an interrupted run continued from its checkpoint gives, bit for bit, the
draws of the uninterrupted run with the same seed.

The outside reference is the uninterrupted run itself: numpy's PCG64 stream and the
sampler are deterministic, so any difference (a lost generator state, a step size or
metric not restored, a likelihood warm start that differs in the last bits) shows up as
unequal draws. The stops come from an internal hook at a chosen iteration or density
evaluation; test_signals.py does the same with real signals.
"""

from __future__ import annotations

import signal

import numpy as np
import pytest

import bayesirl as bi
from bayesirl.execution.backend import Processes
from bayesirl.execution.interrupt import StopHook

from .helpers import RUN, assert_identical, interrupt, sample, uninterrupted

# Warmup (iteration 20 < 40), sampling (iteration 55 = draw 15) and mid-iteration (a NUTS
# trajectory or a random-walk proposal cut at that density evaluation, then rolled back).
STOPS = {
    "warmup": StopHook(0, iteration=20),
    "sampling": StopHook(1, iteration=55),
    "mid-iteration": StopHook(0, evaluation=150),
}


@pytest.mark.parametrize("processes", [1, 2])
@pytest.mark.parametrize("method", ["nuts", "random-walk"])
@pytest.mark.parametrize("where", list(STOPS))
def test_resume_matches_uninterrupted_run(tmp_path, monkeypatch, method, processes, where):
    stop = STOPS[where]
    if method == "random-walk" and where == "mid-iteration":
        stop = StopHook(0, evaluation=30)  # one evaluation per iteration: 30 < 72 in all
    path = tmp_path / "run.npz"
    caught = interrupt(monkeypatch, path, stop, method=method, processes=processes)
    assert caught.checkpoint == path and path.is_file()
    assert caught.signal == signal.SIGINT
    partial, full = caught.posterior, uninterrupted(method, processes)
    assert partial.complete is False and full.complete is True
    # The draws so far are the uninterrupted run's first draws of the chains kept.
    kept, n = partial.settings["chains_kept"], partial.n_draws
    assert np.array_equal(partial.weights, full.weights[kept, :n])
    resumed = sample(path, resume=True, method=method, backend=Processes(processes))
    assert resumed.complete
    assert_identical(resumed, full)


def test_partial_posterior_during_warmup_has_no_draws(tmp_path, monkeypatch):
    caught = interrupt(monkeypatch, tmp_path / "w.npz", StopHook(0, iteration=20))
    p = caught.posterior
    # Serial run: chain 0 stopped at iteration 20 of warmup, chain 1 never started.
    assert p.n_draws == 0 and not p.complete
    assert p.settings["iterations_done"] == [20, 0]
    assert "no draws" in str(caught) and "no draws" in p.summary()


def test_partial_posterior_keeps_chains_past_warmup(tmp_path, monkeypatch):
    # Serial: chain 0 finished (70 iterations), chain 1 stopped at 55 = 15 draws.
    caught = interrupt(monkeypatch, tmp_path / "s.npz", StopHook(1, iteration=55))
    p = caught.posterior
    assert p.settings["iterations_done"] == [70, 55]
    assert p.settings["chains_kept"] == [0, 1] and p.n_draws == 15


def test_repeated_interruptions_still_match(tmp_path, monkeypatch):
    path = tmp_path / "r.npz"
    interrupt(monkeypatch, path, StopHook(0, iteration=10))
    second = interrupt(monkeypatch, path, StopHook(0, evaluation=40), resume=True)
    assert second.posterior.settings["iterations_done"][0] > 10
    interrupt(monkeypatch, path, StopHook(1, iteration=60), resume=True)
    assert_identical(sample(path, resume=True), uninterrupted("nuts", 1))


def test_finished_checkpoint_resumes_to_the_same_posterior(tmp_path):
    path = tmp_path / "done.npz"
    first = sample(path)
    assert_identical(first, uninterrupted("nuts", 1))
    assert_identical(sample(path, resume=True), first)


def test_interrupt_without_checkpoint_still_gives_the_draws(monkeypatch):
    caught = interrupt(monkeypatch, None, StopHook(1, iteration=50), processes=2)
    assert caught.checkpoint is None and "no checkpoint" in str(caught)
    assert caught.posterior.n_draws > 0 and not caught.posterior.complete


def test_signal_handlers_are_restored(tmp_path, monkeypatch):
    def mine(signum, frame):  # a handler of the caller's that sample must put back
        pass

    old_int, old_term = signal.signal(signal.SIGINT, mine), signal.signal(signal.SIGTERM, mine)
    try:
        interrupt(monkeypatch, tmp_path / "h.npz", StopHook(0, iteration=5))
        assert signal.getsignal(signal.SIGINT) is mine
        assert signal.getsignal(signal.SIGTERM) is mine
        sample(None)
        assert signal.getsignal(signal.SIGINT) is mine
    finally:
        signal.signal(signal.SIGINT, old_int)
        signal.signal(signal.SIGTERM, old_term)


def test_complete_flag_is_saved_and_restored(tmp_path, monkeypatch):
    caught = interrupt(monkeypatch, None, StopHook(1, iteration=50))
    caught.posterior.save(tmp_path / "partial.nc")
    assert bi.Posterior.load(tmp_path / "partial.nc").complete is False
    uninterrupted("nuts", 1).save(tmp_path / "full.nc")
    assert bi.Posterior.load(tmp_path / "full.nc").complete is True
    assert RUN["chains"] == 2  # the stop hooks above assume two chains


def test_a_pathfinder_start_resumes_exactly(tmp_path, monkeypatch):
    # The path runs once, when the chain starts; the record holds everything after it.
    path = tmp_path / "run.npz"
    caught = interrupt(monkeypatch, path, StopHook(0, iteration=20), start="pathfinder")
    full = sample(None, start="pathfinder")
    kept, n = caught.posterior.settings["chains_kept"], caught.posterior.n_draws
    assert np.array_equal(caught.posterior.weights, full.weights[kept, :n])
    resumed = sample(path, resume=True, start="pathfinder")
    assert_identical(resumed, full)
    # The checkpoint belongs to a pathfinder run: resuming it as a uniform-start run is refused.
    with pytest.raises(bi.InputError):
        sample(path, resume=True)
