"""Run the coverage study's replications one by one, appending each result to a JSON Lines
file (so that a stopped run keeps what it has): ``python -m dynamics.run_coverage OUT N``
from ``tests/``. The slow test runs the same replications and asserts on them."""

from __future__ import annotations

import json
import sys
import time

from .coverage import replicate


def main(out: str, reps: int, first: int = 0) -> None:
    for r in range(first, reps):
        t0 = time.perf_counter()
        pooled, plug = replicate(r)
        with open(out, "a") as fh:
            fh.write(json.dumps({"rep": r, "pooled": pooled.tolist(), "plug_in": plug.tolist(),
                                 "seconds": round(time.perf_counter() - t0, 1)}) + "\n")


if __name__ == "__main__":
    main(sys.argv[1], int(sys.argv[2]), int(sys.argv[3]) if len(sys.argv) > 3 else 0)
