"""Posterior layer: the log-posterior, the Posterior object and its files.

Running the chains (processes, signals, checkpoints, progress, Dask) is the execution layer,
:mod:`bayesirl.execution`, one layer up; ``sample`` lives there.
"""

from typing import TYPE_CHECKING

from bayesirl.lazy import exports

# Imported on first use (bayesirl.lazy): a problem file's [pooling] table needs
# posterior.groups, not the Posterior with its files and ArviZ.
_EXPORTS = {"Diagnostics": "bayesirl.posterior.diagnostics",
            "PosteriorModel": "bayesirl.posterior.model",
            "Posterior": "bayesirl.posterior.posterior"}
__getattr__, __dir__ = exports(__name__, _EXPORTS, globals())

__all__ = ["Diagnostics", "Posterior", "PosteriorModel"]

if TYPE_CHECKING:  # the same names, eagerly, for type checkers
    from bayesirl.posterior.diagnostics import Diagnostics
    from bayesirl.posterior.model import PosteriorModel
    from bayesirl.posterior.posterior import Posterior
