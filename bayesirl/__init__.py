"""bayesirl: how much do your demonstrations really determine a reward?"""

from __future__ import annotations

import importlib

from bayesirl.errors import InputError, Interrupted, SolverError

__version__ = "0.1.0"

# The public names and the modules they live in. They are imported on first use, so that the
# command line starts (and handles Ctrl-C) before numpy, scipy and numba load.
_LAZY = {
    "Suggestion": "bayesirl.design",
    "suggest": "bayesirl.design",
    "BoltzmannLikelihood": "bayesirl.likelihood",
    "LikelihoodValue": "bayesirl.likelihood",
    "Demonstrations": "bayesirl.model",
    "TabularMDP": "bayesirl.model",
    "simulate": "bayesirl.model",
    "Posterior": "bayesirl.posterior",
    "sample": "bayesirl.posterior",
    "Pooling": "bayesirl.posterior.groups",
    "HalfNormal": "bayesirl.priors",
    "Laplace": "bayesirl.priors",
    "LogNormal": "bayesirl.priors",
    "Normal": "bayesirl.priors",
    "Uniform": "bayesirl.priors",
}


def __getattr__(name: str):
    if name in _LAZY:
        value = getattr(importlib.import_module(_LAZY[name]), name)
        globals()[name] = value  # later look-ups skip this function
        return value
    raise AttributeError(f"module 'bayesirl' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted({*globals(), *_LAZY})


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
