"""Child process of test_signals.py: sample with a checkpoint until a signal arrives.

Usage: ``python signal_child.py CHECKPOINT PARTIAL.nc PROCESSES``. Prints one JSON line.
"""

from __future__ import annotations

import json
import os
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # tests/, for the problems

from posterior.problems import PRIOR, two_feature_likelihood  # noqa: E402

import bayesirl as bi  # noqa: E402
from bayesirl.execution import run  # noqa: E402
from bayesirl.execution.backend import Processes

RUN = dict(chains=2, draws=300, warmup=200, seed=8, progress=False)


class Slowed:
    """The likelihood with a pause before each evaluation: the values are untouched, so
    the draws are those of the plain run, but the run lasts long enough (about 6 ms per
    iteration) that a signal sent mid-run cannot arrive after it finished, even when the
    machine is busy. Same class with ``delay=0`` in the test: same checkpoint fingerprint."""

    def __init__(self, inner, delay: float) -> None:
        self.inner, self.delay = inner, delay

    def __getattr__(self, name):
        if name.startswith("__") or name == "inner":
            raise AttributeError(name)
        return getattr(self.inner, name)

    def evaluate(self, weights, rationality=None):
        if self.delay:
            time.sleep(self.delay)
        return self.inner.evaluate(weights, rationality)


def likelihood(delay: float) -> Slowed:
    """The two-feature problem, slowed by ``delay`` seconds per evaluation."""
    return Slowed(two_feature_likelihood(), delay)


def children() -> list[int]:
    """Every child process of this one, running or zombie."""
    out = []
    for task in Path(f"/proc/{os.getpid()}/task").iterdir():
        out += [int(p) for p in (task / "children").read_text().split()]
    return out


def main() -> None:
    path, partial, processes = sys.argv[1], sys.argv[2], int(sys.argv[3])
    run.CHECKPOINT_EVERY = 0.2  # the parent waits for the first write before signalling
    report = {"status": "finished"}
    try:
        bi.sample(likelihood(0.001), PRIOR, backend=Processes(processes), checkpoint=path, **RUN)
    except bi.Interrupted as exc:
        report = {"status": "interrupted", "caught_at": time.time(), "signal": exc.signal,
                  "checkpoint": str(exc.checkpoint), "complete": exc.posterior.complete,
                  "draws": exc.posterior.n_draws}
        exc.posterior.save(partial)
    report["children"] = children()
    print(json.dumps(report), flush=True)


if __name__ == "__main__":
    main()
