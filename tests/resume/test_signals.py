"""Real signals to a real process: stop within about a second, keep the state, resume exactly.

A child Python process samples with a checkpoint; once the first checkpoint is on disk the
test sends SIGINT to the whole process group (what Ctrl-C at a terminal does) or SIGTERM
to the main process only (what ``kill`` does). The child must raise Interrupted within 2 s,
leave no worker behind (no children, running or zombie, and nothing left in its process
group), print no traceback, and its checkpoint must resume to the uninterrupted run's draws.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from functools import cache
from pathlib import Path

import numpy as np
import pytest
from posterior.problems import PRIOR

import bayesirl as bi
from bayesirl.execution import checkpoint as ckpt
from bayesirl.execution.backend import Processes

from .signal_child import RUN, likelihood

CHILD = Path(__file__).with_name("signal_child.py")
ROOT = Path(__file__).resolve().parents[2]
STOP_WITHIN = 2.0  # seconds from the signal to Interrupted being raised


@cache
def _reference() -> bi.Posterior:
    return bi.sample(likelihood(0.0), PRIOR, backend=Processes(2), **RUN)


def _progress(path: Path) -> int:
    """Iterations done by the first chain, per the checkpoint on disk (0 if none yet)."""
    try:
        records = ckpt.read(path)[1]
    except bi.InputError:  # not written yet
        return -1
    return records[0].meta["iteration"] if records[0] is not None else 0


def _start(tmp_path: Path, processes: int, after: int) -> tuple[subprocess.Popen, Path, Path]:
    path, partial = tmp_path / "run.npz", tmp_path / "partial.nc"
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(
        [str(ROOT)] + [p for p in os.environ.get("PYTHONPATH", "").split(os.pathsep) if p])}
    proc = subprocess.Popen(
        [sys.executable, str(CHILD), str(path), str(partial), str(processes)], cwd=ROOT,
        env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
        start_new_session=True,  # its own process group, as a terminal job has
    )
    deadline = time.monotonic() + 60
    while _progress(path) < after:  # periodic checkpoints show how far sampling got
        if proc.poll() is not None or time.monotonic() > deadline:
            proc.kill()
            pytest.fail(f"child did not start sampling: {proc.communicate()[1][-2000:]}")
        time.sleep(0.02)
    return proc, path, partial


# signal, to the whole group?, processes, iterations of chain 0 before the signal: the
# first two cases stop in the sampling phase, the last at the first checkpoint (usually
# still in warmup; the deterministic warmup stops are in test_resume.py)
CASES = {
    "ctrl-c to the group, parallel": (signal.SIGINT, True, 2, 230),
    "sigint to the main, serial": (signal.SIGINT, False, 1, 230),
    "sigterm to the main, parallel": (signal.SIGTERM, False, 2, 0),
}


# The serial case costs another child process; it runs with the slow suites.
@pytest.mark.parametrize("case", [pytest.param(c, marks=pytest.mark.slow) if "serial" in c
                                  else c for c in CASES])
def test_real_signal_stops_cleanly_and_resumes_exactly(tmp_path, case):
    signum, group, processes, after = CASES[case]
    proc, path, partial = _start(tmp_path, processes, after)
    sent = time.time()
    (os.killpg if group else os.kill)(proc.pid, signum)
    out, err = proc.communicate(timeout=30)
    report = json.loads(out.strip().splitlines()[-1])
    assert report["status"] == "interrupted", report
    assert report["caught_at"] - sent < STOP_WITHIN
    assert report["signal"] == signum and report["children"] == []
    assert "Traceback" not in err, err
    assert proc.returncode == 0
    with pytest.raises(ProcessLookupError):
        os.killpg(proc.pid, 0)  # nothing left running in its process group
    reference = _reference()
    saved = bi.Posterior.load(partial)
    assert saved.complete is False
    kept, n = saved.settings["chains_kept"], saved.n_draws
    assert n == report["draws"]
    if after > RUN["warmup"]:
        assert n > 0
    assert np.array_equal(saved.weights, reference.weights[kept, :n])
    resumed = bi.sample(likelihood(0.0), PRIOR, backend=Processes(processes), checkpoint=path,
                        resume=True, **RUN)
    assert np.array_equal(resumed.weights, reference.weights)
    for key in reference.stats:
        assert np.array_equal(resumed.stats[key], reference.stats[key], equal_nan=True), key


@pytest.mark.slow
def test_workers_do_not_outlive_a_killed_parent(tmp_path):
    # SIGKILL cannot be caught: the workers must notice their parent is gone and stop. They
    # check at every evaluation; left alone they would run ~3 s more (500 iterations at
    # ~6 ms), so a 1.5 s deadline fails if they do not notice.
    proc, _, _ = _start(tmp_path, processes=2, after=1)
    os.kill(proc.pid, signal.SIGKILL)
    proc.communicate(timeout=30)
    deadline = time.monotonic() + 1.5
    while time.monotonic() < deadline:
        try:
            os.killpg(proc.pid, 0)
        except ProcessLookupError:
            return  # the group is empty: no orphaned worker
        time.sleep(0.05)
    os.killpg(proc.pid, signal.SIGKILL)
    pytest.fail("chain workers kept running after their parent was killed")
