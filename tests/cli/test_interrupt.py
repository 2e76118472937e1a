"""Ctrl-C and SIGTERM during ``bayesirl fit``: real processes, real signals.

The run folder keeps the draws so far, marked incomplete, and ``fit --resume`` reaches the
requested draws with exactly the draws of an uninterrupted run of the same seed.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time

import numpy as np
import pytest

import bayesirl
from bayesirl.scenarios.bundled import EXAMPLES

from .helpers import cli_env

# Long enough that the signal lands mid-sampling on a loaded two-core machine.
SAMPLER = "[sampler]\nchains = 2\ndraws = 2500\nwarmup = 150\nseed = 11\n"
# The issue asks for a stop "within a second or two"; on a shared, loaded machine we allow
# a little more before calling it a failure.
STOP_WITHIN = 4.0


def _problem(folder):
    problem, demos = EXAMPLES["park"].write(folder)
    text = problem.read_text()
    problem.write_text(text[: text.index("[sampler]")] + SAMPLER)
    return problem, demos


def _start_fit(problem, demos, out) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "bayesirl", "fit", str(problem), str(demos), "--out", str(out)],
        env=cli_env(), stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
        start_new_session=True)  # its own process group, like a job in a terminal


def _interrupt(proc: subprocess.Popen, signum: int, after: float,
               folder=None) -> tuple[int, float, str]:
    """Wait until sampling has begun, send ``signum``, return (code, seconds to stop, stderr).

    With ``folder``, sampling has begun once the first checkpoint is in the run's hidden
    staging folder there (the sampler writes it every two seconds); ``after`` counts from then.
    """
    line = proc.stderr.readline()  # the "sampling ..." status line comes just before
    assert "sampling" in line, line
    if folder is not None:
        _partial_checkpoint(folder, proc)
    time.sleep(after)
    assert proc.poll() is None, "the fit finished before the signal"
    t0 = time.monotonic()
    if signum == signal.SIGINT:
        os.killpg(proc.pid, signum)  # Ctrl-C reaches the whole foreground group
    else:
        proc.send_signal(signum)  # `kill PID` reaches the main process only
    _, err = proc.communicate(timeout=60)
    return proc.returncode, time.monotonic() - t0, line + err


def _weights(run) -> np.ndarray:
    import arviz as az

    return az.from_netcdf(str(run / "posterior.nc")).posterior["weights"].values


@pytest.fixture(scope="module")
def uninterrupted(tmp_path_factory):
    folder = tmp_path_factory.mktemp("reference")
    problem, demos = _problem(folder)
    done = subprocess.run([sys.executable, "-m", "bayesirl", "--quiet", "fit", str(problem),
                           str(demos), "--out", str(folder / "run")], env=cli_env(),
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    return _weights(folder / "run")


def _interrupt_and_resume(tmp_path, signum, uninterrupted):
    problem, demos = _problem(tmp_path)
    run = tmp_path / "run"
    code, seconds, err = _interrupt(_start_fit(problem, demos, run), signum, after=1.0,
                                    folder=tmp_path)
    assert code == 130, err
    assert seconds < STOP_WITHIN, seconds
    assert f"bayesirl fit --resume {run}" in err
    summary = json.loads((run / "summary.json").read_text())
    assert summary["complete"] is False and "report" not in summary
    assert (run / "checkpoint").exists() and not (run / "report.html").exists()
    assert 0 < summary["draws_done"] < 2500
    assert _weights(run).shape[1] == summary["draws_done"]
    done = subprocess.run([sys.executable, "-m", "bayesirl", "--quiet", "fit", "--resume",
                           str(run)], env=cli_env(), capture_output=True, text=True,
                          timeout=300)
    assert done.returncode == 0, done.stderr
    summary = json.loads((run / "summary.json").read_text())
    assert summary["complete"] is True and summary["draws_done"] == 2500
    assert (run / "report.html").is_file() and not (run / "checkpoint").exists()
    # Same seed, same draws: bit-for-bit what the uninterrupted run drew.
    np.testing.assert_array_equal(_weights(run), uninterrupted)


@pytest.mark.slow  # ~19 s; Ctrl-C and exact resume stay in tests/resume/test_signals.py
def test_ctrl_c_keeps_draws_and_resume_matches_an_uninterrupted_run(tmp_path, uninterrupted):
    _interrupt_and_resume(tmp_path, signal.SIGINT, uninterrupted)


@pytest.mark.slow
def test_sigterm_keeps_draws_and_resume_matches(tmp_path, uninterrupted):
    _interrupt_and_resume(tmp_path, signal.SIGTERM, uninterrupted)


class _StandInInterrupted(KeyboardInterrupt):
    """Shaped like ``bayesirl.Interrupted``: the draws so far and the checkpoint path."""

    def __init__(self, posterior, checkpoint) -> None:
        super().__init__("interrupted")
        self.posterior, self.checkpoint = posterior, checkpoint


def test_fit_keeps_an_interrupted_run_and_resumes_it_with_a_stand_in_sampler(
        tiny, monkeypatch, capsys):
    # The folder handling of fit/--resume, exercised now against the announced contract of
    # sample(checkpoint=..., resume=...) with the real sampler underneath.
    from bayesirl.cli import main

    real_sample = bayesirl.sample
    calls = []

    def stand_in(lik, checkpoint=None, resume=False, **kw):
        calls.append((checkpoint.name, resume, kw["draws"]))
        if not resume:
            checkpoint.write_text("sampler state")
            raise _StandInInterrupted(real_sample(lik, **{**kw, "draws": 10}), checkpoint)
        assert checkpoint.read_text() == "sampler state"
        return real_sample(lik, **kw)

    monkeypatch.setattr(bayesirl, "Interrupted", _StandInInterrupted, raising=False)
    monkeypatch.setattr(bayesirl, "sample", stand_in)
    problem, demos = tiny
    run = problem.parent / "run"
    assert main(["--quiet", "fit", str(problem), str(demos), "--out", str(run)]) == 130
    assert f"continue with: bayesirl fit --resume {run}" in capsys.readouterr().err
    summary = json.loads((run / "summary.json").read_text())
    assert (summary["complete"], summary["draws_done"]) == (False, 10)
    assert sorted(p.name for p in run.iterdir()) == ["checkpoint", "posterior.nc",
                                                     "summary.json"]
    assert main(["report", str(run), "--quiet"]) == 0  # partial draws can be looked at
    assert "interrupted run" in capsys.readouterr().err
    # The page itself says so (the report of a finished run, below, does not).
    assert "INTERRUPTED RUN: only 10 draws per chain" in (run / "report.html").read_text()
    demos.write_text(demos.read_text() + "c,0,0,0,right\n")
    assert main(["fit", "--resume", str(run)]) == 2
    assert "changed since the run started" in capsys.readouterr().err
    demos.write_text(demos.read_text().replace("c,0,0,0,right\n", ""))
    assert main(["--quiet", "fit", "--resume", str(run)]) == 0
    summary = json.loads((run / "summary.json").read_text())
    assert (summary["complete"], summary["draws_done"]) == (True, 60)
    assert sorted(p.name for p in run.iterdir()) == ["posterior.nc", "report.html",
                                                     "summary.json"]
    assert "INTERRUPTED RUN" not in (run / "report.html").read_text()
    assert calls == [("checkpoint", False, 60), ("checkpoint", True, 60)]
    assert main(["fit", "--resume", str(run)]) == 2
    assert "already complete" in capsys.readouterr().err


def _partial_checkpoint(folder, proc, deadline=120.0):
    """Wait until the running fit has written a checkpoint into its hidden staging folder."""
    t0 = time.monotonic()
    while time.monotonic() - t0 < deadline:
        found = [p for p in folder.glob(".run.partial-*") if (p / "checkpoint").is_file()]
        if found:
            return found[0]
        assert proc.poll() is None, proc.communicate()
        time.sleep(0.1)
    raise AssertionError("no checkpoint was written")


def test_sigkill_then_resume_from_the_hidden_folder(tmp_path, uninterrupted):
    problem, demos = _problem(tmp_path)
    run = tmp_path / "run"
    proc = _start_fit(problem, demos, run)
    partial = _partial_checkpoint(tmp_path, proc)
    # While the run is alive its staging folder is not taken from under it.
    busy = subprocess.run([sys.executable, "-m", "bayesirl", "fit", "--resume", str(run)],
                          env=cli_env(), capture_output=True, text=True, timeout=120)
    assert busy.returncode == 2 and "still running" in busy.stderr, busy.stderr
    os.killpg(proc.pid, signal.SIGKILL)  # no handler runs: nothing is saved on the way out
    proc.communicate(timeout=60)
    assert proc.returncode == -signal.SIGKILL
    assert not run.exists() and (partial / "checkpoint").is_file()
    done = subprocess.run([sys.executable, "-m", "bayesirl", "--quiet", "fit", "--resume",
                           str(run)], env=cli_env(), capture_output=True, text=True,
                          timeout=300)
    assert done.returncode == 0, done.stderr
    summary = json.loads((run / "summary.json").read_text())
    assert summary["complete"] is True and summary["draws_done"] == 2500
    assert not list(tmp_path.glob(".run*"))  # the hidden folder's state moved into run
    np.testing.assert_array_equal(_weights(run), uninterrupted)
