"""What an evidence term is: a log density over named quantities, with its own warm starts.

The log posterior reads like a Stan model, ``target += prior; target += term_1; ...``: a
prior plus a sum of evidence terms. Each term owns its data (demonstrations of one
demonstrator, later state-only episodes, comparisons between episodes, observed
transitions), its warm-start state and the exact gradient of its log density with respect
to the named quantities it reads. The terms know nothing of how the sampler's unconstrained
vector maps to those quantities; :mod:`bayesirl.posterior` does that mapping and the prior.

Quantities are named arrays: ``"weights"`` (shape ``(F,)``) for one reward shared by every
episode, ``"weights/3"`` for demonstrator 3's own reward, ``"rationality"`` (a positive
float, the inverse temperature). Positive quantities are differentiated on the log scale
(the gradient under ``"rationality"`` is ``d log p / d log(beta)``), since that is the
coordinate the sampler moves in.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import NamedTuple, Protocol, runtime_checkable

import numpy as np


class TermValue(NamedTuple):
    """A term's log density and its gradient per quantity it reads (empty without one)."""

    logp: float
    grads: Mapping[str, np.ndarray | float]


class Pointwise(NamedTuple):
    """A term's log density split by observation, for model checking and PSIS-LOO.

    ``episode`` holds the log densities of the episodes the term explains and ``episodes``
    says which they are: their indices in the demonstration set, or None for episodes of the
    term's own (episodes with unrecorded parts), which the evidence model numbers after the
    demonstrations, in term order. ``step``, where a step is an observation of its own, holds
    the per-step values of those episodes in order (episode, then time), else None.
    ``answers`` holds observations that are not episodes (a comparison's answers), one value
    each, else None. ``episode.sum() + answers.sum()`` is the term's log density.
    """

    episodes: np.ndarray | None
    episode: np.ndarray
    step: np.ndarray | None
    answers: np.ndarray | None = None


@runtime_checkable
class PointwiseTerm(Protocol):
    """An evidence term that can split its log density by observation (every built-in term)."""

    def pointwise(self, quantities: Mapping[str, object]) -> Pointwise:
        """The term's log density at ``quantities``, per episode (and per step) or answer."""
        ...


@runtime_checkable
class EvidenceTerm(Protocol):
    """One source of evidence about the parameters.

    Attributes
    ----------
    key : str
        Unique within a model; prefixes the term's warm-start arrays in checkpoints (the
        empty key is allowed for a model's only term, which keeps the files of the
        one-term model as they were).
    reads : tuple of str
        The quantities :meth:`evaluate` reads, hence the keys of its gradient.
    n_evaluations : int
        Evaluations so far (part of the warm-start state).
    """

    key: str
    reads: tuple[str, ...]
    n_evaluations: int

    def evaluate(self, quantities: Mapping[str, object], gradient: bool = True) -> TermValue:
        """Log density at ``quantities`` and, if asked, its gradient in each of ``reads``."""
        ...

    def warm_start(self) -> object:
        """A cheap in-memory snapshot of everything later evaluations depend on."""
        ...

    def restore_warm_start(self, snapshot: object) -> None:
        """Return to a :meth:`warm_start` snapshot."""
        ...

    def warm_start_arrays(self) -> dict[str, np.ndarray]:
        """The warm starts as named arrays, for checkpoint files."""
        ...

    def load_warm_start_arrays(self, arrays: dict[str, np.ndarray]) -> None:
        """Inverse of :meth:`warm_start_arrays`: evaluations then continue bit for bit."""
        ...
