"""bayesirl: how much do your demonstrations really determine a reward?"""

from __future__ import annotations

from bayesirl.errors import InputError, SolverError
from bayesirl.likelihood import BoltzmannLikelihood, LikelihoodValue
from bayesirl.model import Demonstrations, TabularMDP, simulate

__version__ = "0.1.0"

__all__ = [
    "BoltzmannLikelihood",
    "Demonstrations",
    "InputError",
    "LikelihoodValue",
    "SolverError",
    "TabularMDP",
    "simulate",
]
