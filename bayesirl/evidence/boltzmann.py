"""Demonstrated actions of a Boltzmann-rational demonstrator as one evidence term.

A thin wrapper: :class:`~bayesirl.likelihood.BoltzmannLikelihood` keeps doing the solving,
warm starts and gradients; the term only names what it reads. With the default names and
an empty key the one-term model computes exactly what the likelihood computed before the
evidence model existed (same floats, same warm-start arrays).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from bayesirl.evidence.term import Pointwise, TermValue


class BoltzmannTerm:
    """``sum_t log pi(a_t | s_t)`` of one likelihood's demonstrations.

    Parameters
    ----------
    likelihood : BoltzmannLikelihood
        Owns the demonstrations and the warm starts; give each chain its own copy.
    key : str
        Prefix of the warm-start arrays ("" only for a model's single term).
    weights, rationality : str
        Names of the quantities read: the reward weights and the inverse temperature.
    episodes : array of int, optional
        Where the likelihood's episodes sit in the whole demonstration set (default: they
        are the whole set); used by :meth:`pointwise`.
    """

    def __init__(self, likelihood, key: str = "", weights: str = "weights",
                 rationality: str = "rationality", episodes=None) -> None:
        self.likelihood = likelihood
        n = likelihood.demos.n_episodes
        self.episodes = (np.arange(n, dtype=np.int64) if episodes is None
                         else np.asarray(episodes, dtype=np.int64))
        self.key = key
        self.weights_name, self.rationality_name = weights, rationality
        self.reads = (weights, rationality)

    def __repr__(self) -> str:
        return (f"BoltzmannTerm(key={self.key!r}, reads={self.reads}, "
                f"steps={self.likelihood.demos.n_steps})")

    @property
    def n_evaluations(self) -> int:
        """Evaluations of the wrapped likelihood (0 if it does not count them)."""
        return int(getattr(self.likelihood, "n_evaluations", 0))

    def evaluate(self, quantities: Mapping[str, object], gradient: bool = True) -> TermValue:
        """Log-likelihood; gradient in the weights and in ``log(rationality)``."""
        w = quantities[self.weights_name]
        beta = quantities[self.rationality_name]
        if not gradient:
            return TermValue(self.likelihood.value(w, beta), {})
        v = self.likelihood.evaluate(w, beta)
        return TermValue(v.loglik, {self.weights_name: v.grad_weights,
                                    self.rationality_name: v.grad_log_rationality})

    def pointwise(self, quantities: Mapping[str, object]) -> Pointwise:
        """Per-episode and per-step log-likelihood (the steps' actions are conditionally
        independent given the reward, so each step is an observation of its own)."""
        lik = self.likelihood
        steps = lik.step_log_likelihood(quantities[self.weights_name],
                                        quantities[self.rationality_name])
        per_episode = np.bincount(lik.demos.steps.episodes, weights=steps,
                                  minlength=lik.demos.n_episodes)
        return Pointwise(self.episodes, per_episode, steps)

    # A likelihood without warm-start methods (a test double, a user's wrapper) still works;
    # its resumes are then exact only if its values do not depend on its history.
    def warm_start(self) -> dict | None:
        """The likelihood's snapshot (None if it keeps no warm starts)."""
        if not hasattr(self.likelihood, "warm_start"):
            return None
        return self.likelihood.warm_start()

    def restore_warm_start(self, snapshot: dict | None) -> None:
        """Back to a snapshot."""
        if snapshot is not None:
            self.likelihood.restore_warm_start(snapshot)

    def warm_start_arrays(self) -> dict[str, np.ndarray]:
        """The likelihood's warm-start arrays."""
        if not hasattr(self.likelihood, "warm_start_arrays"):
            return {}
        return self.likelihood.warm_start_arrays()

    def load_warm_start_arrays(self, arrays: dict[str, np.ndarray]) -> None:
        """Load the likelihood's warm-start arrays."""
        if arrays and hasattr(self.likelihood, "load_warm_start_arrays"):
            self.likelihood.load_warm_start_arrays(arrays)
