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
from bayesirl.posterior import run  # noqa: E402

RUN = dict(chains=2, draws=500, warmup=300, seed=8, progress=False)


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
        bi.sample(two_feature_likelihood(), PRIOR, processes=processes, checkpoint=path, **RUN)
    except bi.Interrupted as exc:
        report = {"status": "interrupted", "caught_at": time.time(), "signal": exc.signal,
                  "checkpoint": str(exc.checkpoint), "complete": exc.posterior.complete,
                  "draws": exc.posterior.n_draws}
        exc.posterior.save(partial)
    report["children"] = children()
    print(json.dumps(report), flush=True)


if __name__ == "__main__":
    main()
