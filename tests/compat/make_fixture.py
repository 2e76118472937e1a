"""Writes ``data/posterior-0.1.0.nc``, the posterior file of a previous release.

Run once with the release whose files must keep loading (``python tests/compat/make_fixture.py``)
and commit the file; never regenerate it with newer code, or the test stops testing the past.
The committed file was written by the code of commit 45a1666 (bayesirl 0.1.0, ArviZ 0.23.4,
xarray 2026.9.0, h5netcdf 1.8.3, Python 3.11).

The problem is a three-state ring with a constant feature, sampled rationality, a pinned
weight and a Laplace prior, so the file carries every optional part of the format.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

import bayesirl as bi
from bayesirl.files import write_json

OUT = Path(__file__).parent / "data" / "posterior-0.1.0.nc"
# The diagnostics that release computed from the file (ArviZ 0.23.4), for comparison.
DIAG = OUT.with_name("diagnostics-0.1.0.json")


def ring_problem():
    """A 3-state ring (stay / move on) whose fourth feature is constant."""
    p = np.zeros((3, 2, 3))
    p[[0, 1, 2], 0, [0, 1, 2]] = 1
    p[[0, 1, 2], 1, [1, 2, 0]] = 1
    phi = np.column_stack([np.eye(3), np.ones(3)])
    mdp = bi.TabularMDP(p, phi, discount=0.9, feature_names=["a", "b", "c", "always"])
    demos = bi.simulate(mdp, [1.0, 0.0, -1.0, 0.0], episodes=20, length=10, seed=0)
    return bi.BoltzmannLikelihood(mdp, demos)


def main() -> None:
    post = bi.sample(ring_problem(), chains=2, draws=100, warmup=100, seed=0, progress=False,
                     rationality=bi.LogNormal(0, 1), pin={"a": 1.0}, prior=bi.Laplace(0, 2))
    OUT.parent.mkdir(parents=True, exist_ok=True)
    post.save(OUT)
    d = bi.Posterior.load(OUT).diagnostics
    write_json(DIAG, {"names": list(d.names), "rhat": d.rhat.tolist(),
                      "ess_bulk": d.ess_bulk.tolist(), "ess_tail": d.ess_tail.tolist(),
                      "divergences": d.divergences, "ebfmi": d.ebfmi.tolist(),
                      "warnings": list(d.warnings)})
    print(f"wrote {OUT} ({OUT.stat().st_size} bytes) and {DIAG}")


if __name__ == "__main__":
    main()
