"""bayesirl: how much do your demonstrations really determine a reward?"""

from __future__ import annotations

from bayesirl.design import Suggestion, suggest
from bayesirl.errors import InputError, Interrupted, SolverError
from bayesirl.likelihood import BoltzmannLikelihood, LikelihoodValue
from bayesirl.model import Demonstrations, TabularMDP, simulate
from bayesirl.posterior import Posterior, sample
from bayesirl.posterior.groups import Pooling
from bayesirl.priors import HalfNormal, Laplace, LogNormal, Normal, Uniform

__version__ = "0.1.0"

__all__ = [
    "BoltzmannLikelihood",
    "HalfNormal",
    "Laplace",
    "LogNormal",
    "Normal",
    "Pooling",
    "Posterior",
    "Uniform",
    "sample",
    "Demonstrations",
    "InputError",
    "Interrupted",
    "LikelihoodValue",
    "SolverError",
    "TabularMDP",
    "simulate",
    "Suggestion",
    "suggest",
]
