"""bayesirl: how much do your demonstrations really determine a reward?

The public names below are imported on first use (PEP 562), so ``import bayesirl`` and
``bayesirl --help`` do not load numba, plotting, ArviZ or Dask: each costs seconds.
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING

__version__ = "0.1.0"

# public name -> module that defines it
_EXPORTS = {
    "AmbiguityReport": "bayesirl.report",
    "BoltzmannLikelihood": "bayesirl.likelihood",
    "Demonstrations": "bayesirl.model",
    "InputError": "bayesirl.errors",
    "Interrupted": "bayesirl.errors",
    "Laplace": "bayesirl.priors",
    "LikelihoodValue": "bayesirl.likelihood",
    "LogNormal": "bayesirl.priors",
    "Normal": "bayesirl.priors",
    "Posterior": "bayesirl.posterior",
    "SolverError": "bayesirl.errors",
    "Suggestion": "bayesirl.design",
    "TabularMDP": "bayesirl.model",
    "Uniform": "bayesirl.priors",
    "ambiguity": "bayesirl.report",
    "sample": "bayesirl.posterior",
    "simulate": "bayesirl.model",
    "suggest": "bayesirl.design",
}

__all__ = [
    "AmbiguityReport",
    "BoltzmannLikelihood",
    "Demonstrations",
    "InputError",
    "Interrupted",
    "Laplace",
    "LikelihoodValue",
    "LogNormal",
    "Normal",
    "Posterior",
    "SolverError",
    "Suggestion",
    "TabularMDP",
    "Uniform",
    "ambiguity",
    "sample",
    "simulate",
    "suggest",
]


def __getattr__(name: str):
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'bayesirl' has no attribute {name!r}")
    value = getattr(import_module(module), name)
    globals()[name] = value  # later lookups skip this function
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_EXPORTS))


if TYPE_CHECKING:  # the same names, eagerly, for type checkers and IDEs
    from bayesirl.design import Suggestion, suggest
    from bayesirl.errors import InputError, Interrupted, SolverError
    from bayesirl.likelihood import BoltzmannLikelihood, LikelihoodValue
    from bayesirl.model import Demonstrations, TabularMDP, simulate
    from bayesirl.posterior import Posterior, sample
    from bayesirl.priors import Laplace, LogNormal, Normal, Uniform
    from bayesirl.report import AmbiguityReport, ambiguity
