"""bayesirl: how much do your demonstrations really determine a reward?

The public names below are imported on first use (PEP 562), so ``import bayesirl`` and
``bayesirl --help`` do not load numba, plotting, ArviZ or Dask: each costs seconds.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING

from bayesirl.errors import InputError, Interrupted, SolverError
from bayesirl.version import __version__ as __version__  # re-exported

# The public names and the modules they live in. They are imported on first use, so that the
# command line starts (and handles Ctrl-C) before numpy, scipy and numba load.
_EXPORTS = {
    "InputError": "bayesirl.errors",  # these three are imported above (they are light)
    "Interrupted": "bayesirl.errors",
    "SolverError": "bayesirl.errors",
    # From the submodule itself: once ``bayesirl.report.ambiguity`` is imported, the package
    # attribute of that name is the submodule, not the function.
    "AmbiguityReport": "bayesirl.report.ambiguity",
    "ambiguity": "bayesirl.report.ambiguity",
    "Suggestion": "bayesirl.design",
    "suggest": "bayesirl.design",
    "BoltzmannLikelihood": "bayesirl.likelihood",
    "LikelihoodValue": "bayesirl.likelihood",
    "Demonstrations": "bayesirl.model",
    "TabularMDP": "bayesirl.model",
    "simulate": "bayesirl.model",
    "Posterior": "bayesirl.posterior",
    "sample": "bayesirl.execution",
    "approximate": "bayesirl.execution.approximate",
    "Approximate": "bayesirl.execution.approximate",
    "Backend": "bayesirl.execution.backend",
    "Cluster": "bayesirl.execution.backend",
    "Processes": "bayesirl.execution.backend",
    "Serial": "bayesirl.execution.backend",
    "Pooling": "bayesirl.posterior.groups",
    "HalfNormal": "bayesirl.priors",
    "Laplace": "bayesirl.priors",
    "LogNormal": "bayesirl.priors",
    "Normal": "bayesirl.priors",
    "Prior": "bayesirl.priors",
    "Uniform": "bayesirl.priors",
}


def __getattr__(name: str):
    if name in _EXPORTS:
        value = getattr(importlib.import_module(_EXPORTS[name]), name)
        globals()[name] = value  # later look-ups skip this function
        return value
    raise AttributeError(f"module 'bayesirl' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted({*globals(), *_EXPORTS})


__all__ = [
    "AmbiguityReport",
    "Approximate",
    "Backend",
    "BoltzmannLikelihood",
    "Cluster",
    "Demonstrations",
    "HalfNormal",
    "InputError",
    "Interrupted",
    "Laplace",
    "LikelihoodValue",
    "LogNormal",
    "Normal",
    "Pooling",
    "Posterior",
    "Prior",
    "Processes",
    "Serial",
    "SolverError",
    "Suggestion",
    "TabularMDP",
    "Uniform",
    "ambiguity",
    "approximate",
    "sample",
    "simulate",
    "suggest",
]


if TYPE_CHECKING:  # the same names, eagerly, for type checkers and IDEs
    from bayesirl.design import Suggestion, suggest
    from bayesirl.execution import sample
    from bayesirl.execution.approximate import Approximate, approximate
    from bayesirl.execution.backend import Backend, Cluster, Processes, Serial
    from bayesirl.likelihood import BoltzmannLikelihood, LikelihoodValue
    from bayesirl.model import Demonstrations, TabularMDP, simulate
    from bayesirl.posterior import Posterior
    from bayesirl.posterior.groups import Pooling
    from bayesirl.priors import HalfNormal, Laplace, LogNormal, Normal, Prior, Uniform
    from bayesirl.report.ambiguity import AmbiguityReport, ambiguity
