"""Posterior layer: the log-posterior, running chains, the Posterior object and its files."""

from bayesirl.posterior.diagnostics import Diagnostics
from bayesirl.posterior.model import PosteriorModel
from bayesirl.posterior.posterior import Posterior
from bayesirl.posterior.run import sample

__all__ = ["Diagnostics", "Posterior", "PosteriorModel", "sample"]
