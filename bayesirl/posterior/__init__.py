"""Posterior layer: the log-posterior, the Posterior object and its files.

Running the chains (processes, signals, checkpoints, progress, Dask) is the execution layer,
:mod:`bayesirl.execution`, one layer up; ``sample`` lives there.
"""

from bayesirl.posterior.diagnostics import Diagnostics
from bayesirl.posterior.model import PosteriorModel
from bayesirl.posterior.posterior import Posterior

__all__ = ["Diagnostics", "Posterior", "PosteriorModel"]
