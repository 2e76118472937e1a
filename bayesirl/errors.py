"""Error types shared by every layer.

Bad user input raises :class:`InputError` (a ``ValueError``) naming what is wrong and where;
numerical failure (a solver that does not converge) raises :class:`SolverError`.
"""

from __future__ import annotations


class InputError(ValueError):
    """Invalid input: the message names the object, the position and the offending value."""


class SolverError(RuntimeError):
    """A numerical method did not reach its stated tolerance; nothing is returned."""


class Interrupted(KeyboardInterrupt):
    """Sampling stopped on SIGINT or SIGTERM; the draws so far are kept.

    A ``KeyboardInterrupt``, so code that catches ``Exception`` does not swallow it.

    Attributes
    ----------
    posterior : Posterior
        The draws so far (``posterior.complete`` is False): the chains past warmup, cut
        to the shortest (``settings["chains_kept"]``); zero draws if all are in warmup.
    checkpoint : pathlib.Path or None
        Where the state was saved (resume with ``sample(..., checkpoint=..., resume=True)``).
    signal : int or None
        The signal that stopped the run.
    """

    def __init__(self, message: str, posterior=None, checkpoint=None, signal=None) -> None:
        super().__init__(message)
        self.posterior = posterior
        self.checkpoint = checkpoint
        self.signal = signal
