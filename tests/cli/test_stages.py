"""Real signals at every stage after sampling, a SIGKILL, and Ctrl-C during start-up.

A child process (``stage_child.py``) runs ``bayesirl`` with one stage slowed by a sleep that
begins with a marker line on stderr; the signal is sent after the marker, so it lands inside
that stage on any machine. The work itself is unchanged, so the draws must be bit-identical
to an uninterrupted run of the same seed.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from .helpers import TINY_CSV, TINY_TOML, cli_env, run_subprocess

CHILD = Path(__file__).with_name("stage_child.py")


def _weights(run: Path) -> np.ndarray:
    import arviz as az

    return az.from_netcdf(str(run / "posterior.nc")).posterior["weights"].values


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    """The tiny problem's files and the draws of an uninterrupted run of it."""
    folder = tmp_path_factory.mktemp("stages")
    (folder / "tiny.toml").write_text(TINY_TOML)
    (folder / "walks.csv").write_text(TINY_CSV)
    done = run_subprocess(["--quiet", "fit", "tiny.toml", "walks.csv", "--out", "ref"],
                          cwd=folder)
    assert done.returncode == 0, done.stderr
    return folder, _weights(folder / "ref")


# Seconds each stage sleeps: the report and start-up sleeps are cut short by the signal; the
# save section holds signals, so it sleeps to the end before the signal is acted on.
SLEEP = {"report": 30, "startup": 30, "save": 3}


def _signal_stage(folder: Path, stage: str, signum: int, out: str, argv=None):
    argv = argv or ["fit", "tiny.toml", "walks.csv", "--out", out]
    proc = subprocess.Popen([sys.executable, str(CHILD), stage, str(SLEEP[stage]), "--quiet",
                             *argv],
                            cwd=folder, env=cli_env(), stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, start_new_session=True)
    lines = []
    while True:  # wait for the stage's marker
        line = proc.stderr.readline()
        assert line, ("the child ended before the stage", "".join(lines))
        lines.append(line)
        if line.startswith(f"STAGE: {stage}"):
            break
    t0 = time.monotonic()
    if signum == signal.SIGINT:
        os.killpg(proc.pid, signum)  # Ctrl-C reaches the whole foreground group
    else:
        proc.send_signal(signum)  # `kill PID` reaches the main process only
    _, err = proc.communicate(timeout=60)
    return proc.returncode, time.monotonic() - t0, "".join(lines) + err


@pytest.mark.parametrize(("stage", "signum"), [
    ("report", signal.SIGINT),
    # ~14 s each: the default run keeps one stage and one signal
    pytest.param("save", signal.SIGTERM, marks=pytest.mark.slow),
    pytest.param("report", signal.SIGTERM, marks=pytest.mark.slow),
    pytest.param("save", signal.SIGINT, marks=pytest.mark.slow)])
def test_a_signal_after_sampling_keeps_every_draw(reference, stage, signum):
    folder, expected = reference
    out = f"run-{stage}-{signum}"
    code, seconds, err = _signal_stage(folder, stage, signum, out)
    assert code == 130, err
    # "report": the sleep is cut short at once; "save": the held section sleeps on (3 s)
    # before the signal is acted on (a cut-short save would fail the checks below).
    assert seconds < 10.0, seconds
    assert "Traceback" not in err and "interrupted while writing the report" in err, err
    assert f"bayesirl report {out}" in err
    run = folder / out
    summary = json.loads((run / "summary.json").read_text())
    assert summary["complete"] is True and summary["draws_done"] == 60
    assert "report" not in summary and not (run / "report.html").exists()
    assert not (run / "checkpoint").exists() and not list(folder.glob(f".{out}*"))
    np.testing.assert_array_equal(_weights(run), expected)  # every draw, bit for bit
    # Either command finishes the job from the saved draws.
    command = ["report", out] if signum == signal.SIGINT else ["fit", "--resume", out]
    done = run_subprocess(["--quiet", *command], cwd=folder)
    assert done.returncode == 0, done.stderr
    summary = json.loads((run / "summary.json").read_text())
    assert summary["complete"] is True and "report" in summary
    assert (run / "report.html").is_file()
    np.testing.assert_array_equal(_weights(run), expected)


@pytest.mark.slow
def test_a_signal_during_the_report_of_a_forced_replacement_keeps_the_new_run(reference):
    folder, expected = reference
    run = folder / "forced"
    run.mkdir()
    (run / "summary.json").write_text('{"format": "bayesirl-run/1", "complete": true}')
    (run / "old.txt").write_text("the run being replaced")
    code, _, err = _signal_stage(folder, "report", signal.SIGTERM, "forced",
                                 ["fit", "tiny.toml", "walks.csv", "--out", "forced",
                                  "--force"])
    assert code == 130, err
    assert not (run / "old.txt").exists() and not list(folder.glob(".forced*"))
    np.testing.assert_array_equal(_weights(run), expected)


def test_ctrl_c_during_start_up_is_a_message_not_a_traceback(reference):
    folder, _ = reference
    code, seconds, err = _signal_stage(folder, "startup", signal.SIGINT, "unused",
                                       ["check", "tiny.toml", "walks.csv"])
    assert code == 130, err
    assert "Traceback" not in err and "bayesirl check: interrupted" in err, err
    assert seconds < 4.0, seconds


def test_the_command_line_starts_without_numpy():
    # What makes Ctrl-C at start-up a clean message: the heavy imports happen inside main.
    done = subprocess.run([sys.executable, "-c", "import sys, bayesirl.cli; "
                           "print(sorted(m for m in ('numpy', 'scipy', 'numba') "
                           "if m in sys.modules))"], env=cli_env(), capture_output=True,
                          text=True, timeout=60)
    assert done.stdout.strip() == "[]", done.stderr
