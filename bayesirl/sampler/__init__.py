"""Generic MCMC kernels driven by a ``theta -> (log density, gradient)`` callable.

* :mod:`~bayesirl.sampler.nuts` - multinomial No-U-Turn Sampler (``init``, ``step``).
* :mod:`~bayesirl.sampler.rwm` - random-walk Metropolis with the same pattern.
* :mod:`~bayesirl.sampler.adaptation` - dual averaging, Welford (co)variance, Stan's
  warmup windows and the initial step-size search.
* :mod:`~bayesirl.sampler.integrators` - leapfrog and kinetic energy.
* :func:`run_chain` - warmup plus sampling for one chain, with picklable output.
* :mod:`~bayesirl.sampler.pathfinder` - Pathfinder (L-BFGS path, normal approximations,
  best by ELBO), with :mod:`~bayesirl.sampler.lbfgs` and PSIS k-hat in
  :mod:`~bayesirl.sampler.psis`: chain starts and a fast approximate posterior.

Nothing here knows about MDPs or rewards.
"""

from __future__ import annotations

from bayesirl.sampler import adaptation, integrators, lbfgs, nuts, pathfinder, psis, rwm
from bayesirl.sampler.chain import METHODS, ChainResult, run_chain
from bayesirl.sampler.nuts import NUTSInfo, NUTSState
from bayesirl.sampler.rwm import RWMInfo, RWMState

__all__ = [
    "METHODS",
    "ChainResult",
    "NUTSInfo",
    "NUTSState",
    "RWMInfo",
    "RWMState",
    "adaptation",
    "integrators",
    "lbfgs",
    "nuts",
    "pathfinder",
    "psis",
    "rwm",
    "run_chain",
]
