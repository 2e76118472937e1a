"""Comparisons between episodes: "episode A is preferred over episode B".

A person shown two episodes chooses the one whose discounted return is higher, Boltzmann-
rationally (Bradley-Terry / Luce choice on returns):

    P(A over B | w) = sigmoid(beta_c (R_A - R_B)),   R = sum_t g^t phi(s_t, a_t) . w,

with its own rationality ``beta_c`` (the person judging need not be the one demonstrating):
a fixed number, or a positive quantity the sampler moves (then, as for demonstrations, only
``beta_c * w`` is identified by comparisons alone and one weight must be pinned). The returns
are linear in ``w``, so each comparison is summarised by the difference of its episodes'
discounted feature sums, computed once; the term needs no Bellman solve.

Ties and "no preference" answers are not modelled: the choice model above has no outcome for
them, and dropping or splitting them would misstate the evidence, so readers refuse them.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from bayesirl.errors import InputError
from bayesirl.evidence.term import Pointwise, TermValue


def discounted_features(mdp, states: np.ndarray, actions: np.ndarray) -> np.ndarray:
    """``sum_t g^t phi(s_t, a_t)`` over an episode's recorded steps, ``(F,)``.

    Every step's state must be recorded, and its action too unless the features depend on
    the state only (then the return does not need it).
    """
    states, actions = np.asarray(states, np.int64), np.asarray(actions, np.int64)
    n = actions.size
    if np.any(states[:n] < 0) or (not mdp.state_features and np.any(actions < 0)):
        raise InputError("comparisons: an episode's return needs every state"
                         + ("" if mdp.state_features else " and action") + " recorded")
    disc = mdp.discount ** np.arange(n)
    phi = (mdp.features[states[:n]] if mdp.state_features
           else mdp.features[states[:n], actions])
    return disc @ phi


class ComparisonTerm:
    """``sum_k log sigmoid(beta_c (Phi_win,k - Phi_lose,k) . w)``.

    Parameters
    ----------
    differences : array (K, F)
        Per comparison, the preferred episode's discounted feature sum minus the other's
        (see :func:`discounted_features`).
    rationality : float or str
        A fixed ``beta_c`` (positive) or the name of the quantity holding it (its gradient is
        then reported in ``log(beta_c)``).
    key, weights : str
        The term's key and the name of the weights it reads.
    """

    def __init__(self, differences, rationality: float | str = 1.0, key: str = "comparisons",
                 weights: str = "weights") -> None:
        d = np.asarray(differences, dtype=np.float64)
        if d.ndim != 2 or d.shape[0] == 0 or not np.all(np.isfinite(d)):
            raise InputError(f"comparisons: expected a finite (K, F) array with K >= 1; got "
                             f"shape {d.shape}")
        self.differences, self.key, self.weights_name = d, key, weights
        if isinstance(rationality, str):
            self.rationality_name, self.fixed = rationality, None
            self.reads = (weights, rationality)
        else:
            beta = float(rationality)
            if not np.isfinite(beta) or beta <= 0:
                raise InputError(f"comparisons: rationality must be positive; got {rationality!r}")
            self.rationality_name, self.fixed = None, beta
            self.reads = (weights,)
        self.n_evaluations = 0

    @classmethod
    def from_episodes(cls, mdp, episodes: Mapping, pairs: Sequence[tuple[str, str]],
                      **kwargs) -> ComparisonTerm:
        """From named episodes ``{name: (states, actions)}`` and (preferred, other) pairs."""
        cache = {}
        rows = []
        for k, (win, lose) in enumerate(pairs):
            for name in (win, lose):
                if name not in episodes:
                    raise InputError(f"comparisons: pair {k} names episode {name!r}, which "
                                     "the episodes do not hold")
                if name not in cache:
                    cache[name] = discounted_features(mdp, *episodes[name])
            if win == lose:
                raise InputError(f"comparisons: pair {k} compares episode {win!r} with itself")
            rows.append(cache[win] - cache[lose])
        return cls(np.asarray(rows), **kwargs)

    def __repr__(self) -> str:
        beta = self.rationality_name if self.fixed is None else self.fixed
        return f"ComparisonTerm(key={self.key!r}, comparisons={len(self)}, rationality={beta})"

    def __len__(self) -> int:
        return self.differences.shape[0]

    def _beta(self, quantities) -> float:
        return self.fixed if self.fixed is not None else float(quantities[self.rationality_name])

    def answer_log_probabilities(self, quantities: Mapping[str, object]) -> np.ndarray:
        """Log-probability of each recorded answer ``(K,)``; they sum to the term's value.

        The one place the choice model's probabilities are written: :meth:`evaluate` sums
        them and :meth:`pointwise` hands them out as the answers' pointwise values.
        """
        w = np.asarray(quantities[self.weights_name], dtype=np.float64)
        z = self._beta(quantities) * (self.differences @ w)
        return -np.logaddexp(0.0, -z)

    def pointwise(self, quantities: Mapping[str, object]) -> Pointwise:
        """No episodes; one value per answer (each answer is an observation of its own)."""
        none = np.zeros(0)
        return Pointwise(np.zeros(0, dtype=np.int64), none, none,
                         self.answer_log_probabilities(quantities))

    def subset(self, keep) -> ComparisonTerm:
        """The same term on the answers ``keep`` (indices), e.g. to leave one out."""
        keep = np.asarray(keep, dtype=np.int64)
        beta = self.rationality_name if self.fixed is None else self.fixed
        return ComparisonTerm(self.differences[keep], rationality=beta, key=self.key,
                              weights=self.weights_name)

    def evaluate(self, quantities: Mapping[str, object], gradient: bool = True) -> TermValue:
        """Log-likelihood; gradient in the weights and (if sampled) in ``log(beta_c)``."""
        self.n_evaluations += 1
        logp = float(self.answer_log_probabilities(quantities).sum())
        if not gradient:
            return TermValue(logp, {})
        beta = self._beta(quantities)
        z = beta * (self.differences @ np.asarray(quantities[self.weights_name], np.float64))
        miss = np.exp(-np.logaddexp(0.0, z))  # 1 - sigmoid(z), without overflow
        grads = {self.weights_name: beta * (miss @ self.differences)}
        if self.fixed is None:
            grads[self.rationality_name] = float(miss @ z)
        return TermValue(logp, grads)

    def hessian_weights(self, quantities: Mapping[str, object]) -> np.ndarray:
        """``d^2 log p / dw^2 = -beta^2 sum_k s_k (1 - s_k) d_k d_k^T`` (for Laplace checks)."""
        beta = self._beta(quantities)
        z = beta * (self.differences @ np.asarray(quantities[self.weights_name]))
        s = np.exp(-np.logaddexp(0.0, -z))
        return -(beta ** 2) * (self.differences.T * (s * (1 - s))) @ self.differences

    # No warm starts: the term is a closed form.
    def warm_start(self) -> int:
        """The evaluation count (the only state)."""
        return self.n_evaluations

    def restore_warm_start(self, snapshot: int) -> None:
        """Back to a :meth:`warm_start` snapshot."""
        self.n_evaluations = int(snapshot)

    def warm_start_arrays(self) -> dict[str, np.ndarray]:
        """The evaluation count as an array."""
        return {"n_evaluations": np.array(self.n_evaluations)}

    def load_warm_start_arrays(self, arrays: dict[str, np.ndarray]) -> None:
        """Inverse of :meth:`warm_start_arrays`."""
        if "n_evaluations" in arrays:
            self.n_evaluations = int(arrays["n_evaluations"])
